package encode_test

import (
	"math"
	"reflect"
	"testing"

	"gonum.org/v1/gonum/stat"

	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/internal/fixture"
)

// shards splits rows 0..n-1 into three contiguous runs of unequal length.
func shards(n int) [][]int {
	var out [][]int
	for _, r := range [][2]int{{0, n / 5}, {n / 5, n / 2}, {n / 2, n}} {
		var rows []int
		for i := r[0]; i < r[1]; i++ {
			rows = append(rows, i)
		}
		out = append(out, rows)
	}
	return out
}

// Summaries of three Iris shards, merged in row order, fit the same plan as
// the whole table for every encoding, and their moments agree with gonum's
// two-pass mean and variance.
func TestSummaryMergeIrisShards(t *testing.T) {
	iris := fixture.ReadCSVText(t, "iris.csv", fixture.IrisWithGaps(), ingest.ReadOptions{})
	cols := iris.Columns
	for _, numeric := range numericEncodings {
		opts := encode.Options{Numeric: mustNumeric(t, numeric), Categorical: mustCategorical(t, "onehot:2")}
		whole, err := encode.FitPlan(cols, nil, opts)
		if err != nil {
			t.Fatal(err)
		}
		merged := make([]*encode.Summary, len(cols))
		for _, rows := range shards(iris.Rows) {
			for i, col := range cols {
				s := encode.Summarize(col, rows)
				if merged[i] == nil {
					merged[i] = s
				} else if err := merged[i].Merge(s); err != nil {
					t.Fatal(err)
				}
			}
		}
		fromShards, err := encode.PlanFromSummaries(merged, opts)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(whole, fromShards) {
			t.Errorf("%s: plan from merged shards differs from the whole:\n got %+v\nwant %+v", numeric, fromShards.Features, whole.Features)
		}
		for _, s := range merged {
			if len(s.Values) < 2 {
				continue
			}
			mean, variance := stat.MeanVariance(s.Values, nil) // gonum: two-pass, an independent computation
			const tol = 1e-12                                  // values of order 1–10, 150 of them: rounding far below
			if math.Abs(s.Moments.Mean-mean) > tol || math.Abs(s.Moments.SD()-math.Sqrt(variance)) > tol {
				t.Errorf("%s: merged moments mean %v sd %v, gonum %v %v", s.Column, s.Moments.Mean, s.Moments.SD(), mean, math.Sqrt(variance))
			}
		}
	}
}

// Merging summaries of different columns is an error, not a silent mix.
func TestSummaryMergeRefusesOtherColumns(t *testing.T) {
	iris := fixture.ReadIris(t)
	a := encode.Summarize(iris.Columns[0], nil)
	if err := a.Merge(encode.Summarize(iris.Columns[1], nil)); err == nil {
		t.Error("merged the summaries of two columns")
	}
}
