package fit_test

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/internal/refdata"
)

// irisZScore is Iris with its four columns standardized, and its classes.
func irisZScore(t *testing.T) (fit.Patterns, []int) {
	t.Helper()
	d, err := refdata.Iris()
	if err != nil {
		t.Fatal(err)
	}
	plan, err := encode.FitPlan(d.Features, nil, encode.Options{Numeric: encode.Encoding{Method: encode.ZScore}})
	if err != nil {
		t.Fatal(err)
	}
	values, _ := plan.EncodeTo(nil, d.Features, nil)
	return fit.Patterns{Width: plan.Width(), Values: values}, d.Classes
}

// irisShards are three runs of Iris rows of unequal length.
var irisShards = [][2]int{{0, 37}, {37, 101}, {101, 150}}

func rowsOf(r [2]int) []int {
	var rows []int
	for i := r[0]; i < r[1]; i++ {
		rows = append(rows, i)
	}
	return rows
}

func relClose(a, b, tol float64) bool { return math.Abs(a-b) <= tol*math.Max(1, math.Abs(b)) }

// The correlation sums of three Iris shards, merged, equal the sum over all
// rows, and their R has the trace and largest eigenvalue the automatic rate
// computes in its own way (rank-k updates and mat.EigenSym).
func TestCorrelationMergeIrisShards(t *testing.T) {
	p, _ := irisZScore(t)
	whole := fit.NewCorrelation(p.Width)
	whole.AddRows(p, nil)
	merged := fit.NewCorrelation(p.Width)
	for _, s := range irisShards {
		part := fit.NewCorrelation(p.Width)
		part.AddRows(p, rowsOf(s))
		if err := merged.Merge(part); err != nil {
			t.Fatal(err)
		}
	}
	const tol = 1e-12 // sums of 150 products of order 1 in another order: round-off near 1e-14
	if merged.Rows != whole.Rows {
		t.Fatalf("merged rows %d, whole %d", merged.Rows, whole.Rows)
	}
	for k := range whole.Sum {
		if !relClose(merged.Sum[k], whole.Sum[k], tol) {
			t.Fatalf("entry %d: merged %v, whole %v", k, merged.Sum[k], whole.Sum[k])
		}
	}
	_, spec, err := fit.AutoRate(p, fit.Options{Batch: true})
	if err != nil {
		t.Fatal(err)
	}
	lambdaMax, traceR := spec.LambdaMax, spec.TraceR
	var eigen mat.EigenSym
	if !eigen.Factorize(merged.Mean(), false) {
		t.Fatal("eigendecomposition failed")
	}
	values := eigen.Values(nil)
	if !relClose(merged.Trace(), traceR, tol) || !relClose(values[len(values)-1], lambdaMax, 1e-10) {
		t.Errorf("merged trace %v λmax %v; AutoRate %v %v", merged.Trace(), values[len(values)-1], traceR, lambdaMax)
	}
}

// One full-batch epoch from zero weights adds rate/N times the update sums;
// the sums of three shards merged give that same step, and the epoch sums
// of the result are the epoch Train measured.
func TestUpdateSumsMergeIrisShards(t *testing.T) {
	p, classes := irisZScore(t)
	const rate = 0.5
	res, err := fit.Train(p, classes, 3, fit.Options{Batch: true, Epochs: 1, Rate: rate, KeepGoing: true})
	if err != nil {
		t.Fatal(err)
	}
	zero := *res.Network
	zero.Weights = make([][]float64, 3)
	for j := range zero.Weights {
		zero.Weights[j] = make([]float64, p.Width)
	}
	zero.Biases = make([]float64, 3)
	var merged fit.UpdateSums
	var mergedEpoch fit.EpochSums
	for k, s := range irisShards {
		u, e := fit.SumUpdates(&zero, fit.Delta{}, p, classes, rowsOf(s))
		if k == 0 {
			merged, mergedEpoch = u, e
			continue
		}
		if err := merged.Merge(u); err != nil {
			t.Fatal(err)
		}
		mergedEpoch.Merge(e)
	}
	const tol = 1e-12 // sums of 150 terms of order 1, added in another order
	step := rate / float64(merged.Rows)
	for j, w := range res.Network.Weights {
		for i := range w {
			if !relClose(step*merged.Weights[j*p.Width+i], w[i], tol) {
				t.Fatalf("unit %d input %d: merged step %v, Train %v", j, i, step*merged.Weights[j*p.Width+i], w[i])
			}
		}
		if !relClose(step*merged.Biases[j], res.Network.Biases[j], tol) {
			t.Fatalf("unit %d bias: merged step %v, Train %v", j, step*merged.Biases[j], res.Network.Biases[j])
		}
	}
	if mergedEpoch.Rows != 150 || mergedEpoch.Units != 3 {
		t.Fatalf("epoch sums over %d rows and %d units", mergedEpoch.Rows, mergedEpoch.Units)
	}
	// The epoch sums of the trained weights are what Train measured.
	var after fit.EpochSums
	for k, s := range irisShards {
		_, e := fit.SumUpdates(res.Network, fit.Delta{}, p, classes, rowsOf(s))
		if k == 0 {
			after = e
		} else {
			after.Merge(e)
		}
	}
	got, want := after.Stats(1), res.History[0]
	if got.Errors != want.Errors || !relClose(got.Loss, want.Loss, tol) {
		t.Errorf("merged epoch %+v, Train measured %+v", got, want)
	}
}
