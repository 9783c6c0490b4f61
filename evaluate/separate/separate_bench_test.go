package separate

import (
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/optimize/convex/lp"

	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// benchDataset makes rows × columns of uniform numbers with three classes,
// each row's class the arg max of three random linear scores of it.
func benchDataset(rows, columns int, seed uint64) *tabular.Dataset {
	rng := rand.New(rand.NewPCG(seed, 2))
	weights := make([][]float64, 3)
	for k := range weights {
		weights[k] = make([]float64, columns)
		for j := range weights[k] {
			weights[k][j] = rng.NormFloat64()
		}
	}
	table := &tabular.Table{Name: "bench", Rows: rows}
	for j := 0; j < columns; j++ {
		table.Columns = append(table.Columns, &tabular.Column{Name: "x" + strconv.Itoa(j), Kind: tabular.Numeric, Numbers: make([]float64, rows)})
	}
	target := &tabular.Column{Name: "y", Kind: tabular.Categorical, Text: make([]string, rows)}
	table.Columns = append(table.Columns, target)
	for r := 0; r < rows; r++ {
		var scores [3]float64
		for j := 0; j < columns; j++ {
			x := rng.Float64()
			table.Columns[j].Numbers[r] = x
			for k := range scores {
				scores[k] += weights[k][j] * x
			}
		}
		best := 0
		for k := range scores {
			if scores[k] > scores[best] {
				best = k
			}
		}
		target.Text[r] = "c" + strconv.Itoa(best)
	}
	d, err := tabular.NewDataset(table, "y", nil)
	if err != nil {
		panic(err)
	}
	return d
}

// benchCheck runs Check on d once per iteration and reports the pivots of
// the slowest split and the undecided splits (both the same every run).
func benchCheck(b *testing.B, d *tabular.Dataset, opts CheckOptions) {
	b.ReportAllocs()
	var r *Report
	for b.Loop() {
		var err error
		if r, err = Check(context.Background(), d, opts); err != nil {
			b.Fatal(err)
		}
	}
	most, undecided := 0, 0
	for _, s := range r.Splits {
		most = max(most, s.Pivots)
		if !s.Verdict.Decided() {
			undecided++
		}
	}
	b.ReportMetric(float64(most), "pivots/split-max")
	b.ReportMetric(float64(undecided), "undecided")
	b.ReportMetric(float64(len(r.Inputs)), "inputs")
}

// BenchmarkCheckOpen is the default check (encoded space, each class
// against the rest) and the raw space on Iris and the open datasets.
func BenchmarkCheckOpen(b *testing.B) {
	for _, set := range []struct{ file, target string }{
		{"iris.csv", "species"},
		{"open/crabs.csv", "species"},
		{"open/birthwt.csv", "low"},
		{"open/spam.csv", "type"},
		{"open/mlc_churn.csv", "churn"},
	} {
		path := filepath.Join("..", "..", "testdata", set.file)
		f, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		table, err := ingest.ReadTable(set.file, f, ingest.ReadOptions{})
		f.Close()
		if err != nil {
			b.Fatal(err)
		}
		d, err := tabular.NewDataset(table, set.target, nil)
		if err != nil {
			b.Fatal(err)
		}
		for _, space := range []Space{Encoded, Raw} {
			b.Run(fmt.Sprintf("data=%s/space=%s", filepath.Base(set.file), space), func(b *testing.B) {
				benchCheck(b, d, CheckOptions{Space: space, Seed: 1})
			})
		}
	}
}

// BenchmarkCheckChemistryLike is the full check with every pair of a
// 214-row, 9-column, 6-class table (chemistryLike) under thermometer
// encodings of 5 to 8 bins, and the default (8).
func BenchmarkCheckChemistryLike(b *testing.B) {
	for _, bins := range []int{5, 6, 7, 8} {
		for seed := uint64(1); seed <= 3; seed++ {
			d := chemistryLike(seed)
			opts := CheckOptions{Pairs: true, Seed: 1, Plan: encode.Options{Numeric: encode.Encoding{Method: encode.Thermometer, Bins: bins}}}
			b.Run(fmt.Sprintf("thermometer=%d/seed=%d", bins, seed), func(b *testing.B) { benchCheck(b, d, opts) })
		}
	}
}

// BenchmarkCheck runs the full one-against-the-rest check of three classes
// with 64 inputs: raw, 64 continuous columns; encoded, 8 columns each as
// 8 thermometer units.
func BenchmarkCheck(b *testing.B) {
	for _, rows := range []int{2000, 20000} {
		for _, tc := range []struct {
			space   Space
			columns int
		}{{Raw, 64}, {Encoded, 8}} {
			d := benchDataset(rows, tc.columns, 1)
			opts := CheckOptions{Space: tc.space, Seed: 1, Plan: encode.Options{Numeric: encode.Encoding{Method: encode.Thermometer, Bins: 9}}}
			b.Run(fmt.Sprintf("rows=%d/inputs=64/classes=3/space=%s", rows, tc.space), func(b *testing.B) { benchCheck(b, d, opts) })
		}
	}
}

// BenchmarkSeparateDegenerate solves one split of 0/1 patterns
// (degeneratePatterns: many ties and repeats, classes overlapping near a
// threshold on the count of units on) over a grid of rows × inputs ×
// density, with no pivot budget. solver=gonum solves the same hull program
// with gonum's lp.Simplex (dense, Bland's rule), which check used before,
// at the sizes it finishes in reasonable time.
func BenchmarkSeparateDegenerate(b *testing.B) {
	for _, rows := range []int{500, 2000} {
		for _, inputs := range []int{32, 128, 512} {
			for _, density := range []float64{0.05, 0.3} {
				p, classes := degeneratePatterns(rows, inputs, density, 1)
				pos, neg := split(classes, 1)
				name := fmt.Sprintf("rows=%d/inputs=%d/density=%g", rows, inputs, density)
				b.Run(name+"/solver=simplex", func(b *testing.B) {
					b.ReportAllocs()
					var res *Result
					for b.Loop() {
						var err error
						if res, err = Separate(context.Background(), p, pos, neg, Options{Seed: 1, Budget: -1}); err != nil {
							b.Fatal(err)
						}
						if !res.Verdict.Decided() {
							b.Fatalf("%s: %s", res.Verdict, res.Reason)
						}
					}
					b.ReportMetric(float64(res.Pivots), "pivots")
				})
				if rows*inputs > 500*32 {
					continue
				}
				b.Run(name+"/solver=gonum", func(b *testing.B) {
					ps, ns := uniquePatterns(p, pos), uniquePatterns(p, neg)
					h := newHullSearch(context.Background(), p, varying(p, ps.rows, ns.rows), &pivotBudget{}, 1)
					if err := h.start(ps.rows, ns.rows); err != nil {
						b.Fatal(err)
					}
					a, c := h.lp.dense()
					for b.Loop() {
						if _, _, err := lp.Simplex(c, a, h.rhs, 1e-10, nil); err != nil && !errors.Is(err, lp.ErrInfeasible) {
							b.Fatal(err)
						}
					}
				})
			}
		}
	}
}
