package separate

import (
	"context"
	"fmt"
	"math/rand/v2"
	"strconv"
	"testing"

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
			b.Run(fmt.Sprintf("rows=%d/inputs=64/classes=3/space=%s", rows, tc.space), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					r, err := Check(context.Background(), d, opts)
					if err != nil {
						b.Fatal(err)
					}
					for _, s := range r.Splits {
						if s.Verdict == Undecided {
							b.Fatalf("%s: %s", s.Positive, s.Reason)
						}
					}
				}
			})
		}
	}
}

// BenchmarkSeparateWidth solves one split, the first class against the
// rest, of continuous raw columns as the input dimension grows: the cost
// behind MaxInputs.
func BenchmarkSeparateWidth(b *testing.B) {
	for _, rows := range []int{1000, 2000} {
		for _, inputs := range []int{64, 128, 192, 256} {
			d := benchDataset(rows, inputs, 1)
			c, err := NewCoordinates(d, Raw, encode.Options{})
			if err != nil {
				b.Fatal(err)
			}
			pos, neg := split(d.Classes, 0)
			b.Run(fmt.Sprintf("rows=%d/inputs=%d", rows, inputs), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					res, err := Separate(context.Background(), c.Points, pos, neg, Options{Seed: 1, MaxInputs: inputs})
					if err != nil {
						b.Fatal(err)
					}
					if res.Verdict == Undecided {
						b.Fatal(res.Reason)
					}
				}
			})
		}
	}
}
