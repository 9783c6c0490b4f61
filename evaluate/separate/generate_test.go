package separate

import (
	"math"
	"math/rand/v2"
	"strconv"

	"deltafit/ingest/tabular"
)

// This file generates, from a seed, the hard inputs of the tests and
// benchmarks. They are invented and used only to load the solver, never as
// a reference for a verdict: verdicts on them are checked by independent
// code (the verifiers, and rational arithmetic in the tests).

// chemistryLike makes a table of 214 rows, 9 numeric columns and 6
// classes of 70, 76, 17, 13, 9 and 29 rows, in the manner of a chemical
// analysis: each class draws each column from its own normal distribution,
// values are rounded to one decimal, and four columns are exactly 0 on
// many rows, with a probability that depends on the class. Thermometer
// encodings of such columns are 0/1 patterns with many repeated rows and
// many tied cuts: highly degenerate hull programs.
func chemistryLike(seed uint64) *tabular.Dataset {
	rng := rand.New(rand.NewPCG(seed, 214))
	sizes := []int{70, 76, 17, 13, 9, 29}
	const columns = 9
	rows := 0
	for _, n := range sizes {
		rows += n
	}
	table := &tabular.Table{Name: "chemistry-like", Rows: rows}
	for j := 0; j < columns; j++ {
		table.Columns = append(table.Columns, &tabular.Column{Name: "c" + strconv.Itoa(j), Kind: tabular.Numeric, Numbers: make([]float64, rows)})
	}
	target := &tabular.Column{Name: "class", Kind: tabular.Categorical, Text: make([]string, rows)}
	table.Columns = append(table.Columns, target)
	// Per class and column: a mean, a spread and, for columns 5-8, the
	// chance of an exact 0.
	mean := make([][]float64, len(sizes))
	spread := make([][]float64, len(sizes))
	zero := make([][]float64, len(sizes))
	for k := range sizes {
		mean[k], spread[k], zero[k] = make([]float64, columns), make([]float64, columns), make([]float64, columns)
		for j := 0; j < columns; j++ {
			mean[k][j] = 3 + 0.3*rng.NormFloat64()
			spread[k][j] = 0.5 + rng.Float64()
			if j >= 5 {
				zero[k][j] = rng.Float64()
			}
		}
	}
	r := 0
	for k, n := range sizes {
		for i := 0; i < n; i++ {
			for j := 0; j < columns; j++ {
				v := 0.0
				if rng.Float64() >= zero[k][j] {
					v = math.Round(10*math.Abs(mean[k][j]+spread[k][j]*rng.NormFloat64())) / 10
				}
				table.Columns[j].Numbers[r] = v
			}
			target.Text[r] = "k" + strconv.Itoa(k+1)
			r++
		}
	}
	d, err := tabular.NewDataset(table, "class", nil)
	if err != nil {
		panic(err)
	}
	return d
}

// degeneratePatterns makes rows 0/1 patterns of width inputs, split into
// two classes that overlap: each row turns each unit on with a probability
// of density, and the class is that of a noisy threshold on the count of
// units on, so most rows sit near the boundary and many repeat.
func degeneratePatterns(rows, inputs int, density float64, seed uint64) (Points, []int) {
	rng := rand.New(rand.NewPCG(seed, 0xde9))
	p := Points{Width: inputs, Values: make([]float64, rows*inputs)}
	classes := make([]int, rows)
	for r := 0; r < rows; r++ {
		on := 0
		for j := 0; j < inputs; j++ {
			if rng.Float64() < density {
				p.Values[r*inputs+j] = 1
				on++
			}
		}
		if float64(on)+rng.NormFloat64() > density*float64(inputs) {
			classes[r] = 1
		}
	}
	return p, classes
}
