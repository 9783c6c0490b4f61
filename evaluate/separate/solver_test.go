package separate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/big"
	"math/rand/v2"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize/convex/lp"

	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// randomProgram makes min cᵀx, [A₀ I]x = b, x ≥ 0 with b ≥ 0 (so the
// identity columns are a feasible basis) and c ≥ 0 (so it is bounded). With
// binary, A₀ is 0/1 and a third of b is 0: a degenerate program.
func randomProgram(rows, cols int, binary bool, seed uint64) (*linearProgram, []float64, []int) {
	rng := rand.New(rand.NewPCG(seed, 7))
	prog := &linearProgram{rows: rows}
	for j := 0; j < cols; j++ {
		var col sparseColumn
		for i := 0; i < rows; i++ {
			v := rng.NormFloat64()
			if binary {
				v = 0
				if rng.Float64() < 0.4 {
					v = 1
				}
			}
			if v != 0 {
				col.index = append(col.index, i)
				col.value = append(col.value, v)
			}
		}
		if len(col.index) == 0 { // gonum refuses a zero column
			col.index, col.value = []int{rng.IntN(rows)}, []float64{1}
		}
		cost := rng.Float64() - 0.3
		prog.add(col, cost)
	}
	basis := make([]int, rows)
	for i := 0; i < rows; i++ {
		basis[i] = prog.add(sparseColumn{index: []int{i}, value: []float64{1}}, rng.Float64())
	}
	rhs := make([]float64, rows)
	for i := range rhs {
		rhs[i] = float64(rng.IntN(3))
		if !binary {
			rhs[i] = rng.Float64()
		}
	}
	return prog, rhs, basis
}

// dense returns the program's A and c for gonum.
func (lp *linearProgram) dense() (*mat.Dense, []float64) {
	a := mat.NewDense(lp.rows, len(lp.columns), nil)
	for j, col := range lp.columns {
		for t, i := range col.index {
			a.Set(i, j, col.value[t])
		}
	}
	return a, append([]float64(nil), lp.cost...)
}

func TestSimplexAgainstGonum(t *testing.T) {
	// Independent reference: gonum's lp.Simplex (dense tableau, Bland's
	// rule, its own Phase I) on the same programs. An unbounded program
	// passes when both say so.
	bounded := 0
	defer func() {
		if bounded < 40 {
			t.Errorf("only %d of 80 programs were bounded: the test compares too few optima", bounded)
		}
	}()
	for _, tc := range []struct {
		name       string
		rows, cols int
		binary     bool
	}{
		{"gaussian 5x8", 5, 8, false},
		{"gaussian 12x30", 12, 30, false},
		{"degenerate 0/1 6x10", 6, 10, true},
		{"degenerate 0/1 15x40", 15, 40, true},
	} {
		for seed := uint64(1); seed <= 20; seed++ {
			t.Run(fmt.Sprintf("%s/seed %d", tc.name, seed), func(t *testing.T) {
				prog, rhs, basis := randomProgram(tc.rows, tc.cols, tc.binary, seed)
				a, c := prog.dense()
				want, _, wantErr := lp.Simplex(c, a, rhs, 1e-10, nil)
				for _, perturbed := range []bool{false, true} {
					s, err := newSimplex(context.Background(), prog, rhs, basis, &pivotBudget{})
					if err != nil {
						t.Fatal(err)
					}
					if perturbed { // solve a perturbed program, then take the perturbation away
						rng := rand.New(rand.NewPCG(seed, 1))
						for i := range s.rhs {
							s.rhs[i] += 1e-7 * (0.5 + rng.Float64())
						}
						s.computeValues()
					}
					err = s.primal()
					if perturbed && err == nil {
						err = s.restore(rhs)
					}
					if errors.Is(wantErr, lp.ErrUnbounded) {
						if err == nil || err.Error() != "separate: the linear program is unbounded" {
							t.Fatalf("perturbed %v: error %v, want unbounded as gonum says", perturbed, err)
						}
						continue
					}
					if wantErr != nil {
						t.Fatalf("gonum: %v", wantErr)
					}
					if err != nil {
						t.Fatalf("perturbed %v: %v", perturbed, err)
					}
					// Rounding of both solvers on entries of order 1.
					if got := s.objective(); math.Abs(got-want) > 1e-8*(1+math.Abs(want)) {
						t.Errorf("perturbed %v: optimum %v, gonum %v", perturbed, got, want)
					}
					if m := slicesMin(s.values); m < -primalTolerance {
						t.Errorf("perturbed %v: a basic value %v is negative", perturbed, m)
					}
					if !perturbed {
						bounded++
					}
				}
			})
		}
	}
}

func slicesMin(x []float64) float64 {
	m := math.Inf(1)
	for _, v := range x {
		m = min(m, v)
	}
	return m
}

// separableByGonum decides a split independently: the rows can be split
// strictly exactly when y_i(w·x_i + b) ≥ 1 is feasible (scale any strict
// separator), solved with gonum's lp.Simplex in its general form.
func separableByGonum(t *testing.T, p Points, pos, neg []int) bool {
	t.Helper()
	d := p.Width
	rows := append(append([]int(nil), pos...), neg...)
	g := mat.NewDense(len(rows), d+1, nil)
	h := make([]float64, len(rows))
	for i, r := range rows {
		y := 1.0
		if i >= len(pos) {
			y = -1
		}
		for j, v := range p.Row(r) {
			g.Set(i, j, -y*v)
		}
		g.Set(i, d, -y)
		h[i] = -1
	}
	c, a, b := lp.Convert(make([]float64, d+1), g, h, nil, nil)
	_, _, err := lp.Simplex(c, a, b, 1e-10, nil)
	switch {
	case err == nil:
		return true
	case errors.Is(err, lp.ErrInfeasible):
		return false
	}
	t.Fatalf("gonum: %v", err)
	return false
}

func TestSeparateAgainstGonum(t *testing.T) {
	// Independent reference: the separation program in (w, b), solved by
	// gonum (separableByGonum), against Separate's verified verdicts on
	// small 0/1 and integer data full of ties and repeats.
	for _, tc := range []struct {
		name         string
		rows, inputs int
		density      float64
	}{
		{"0/1 sparse", 40, 6, 0.2},
		{"0/1 dense", 30, 8, 0.5},
		{"0/1 wide", 20, 16, 0.3},
	} {
		for seed := uint64(1); seed <= 25; seed++ {
			t.Run(fmt.Sprintf("%s/seed %d", tc.name, seed), func(t *testing.T) {
				p, classes := degeneratePatterns(tc.rows, tc.inputs, tc.density, seed)
				pos, neg := split(classes, 1)
				if len(pos) == 0 || len(neg) == 0 {
					t.Skip("one class only")
				}
				res, err := Separate(context.Background(), p, pos, neg, Options{Seed: seed})
				if err != nil {
					t.Fatal(err)
				}
				if !res.Verdict.Decided() {
					t.Fatalf("undecided: %s", res.Reason)
				}
				if want := separableByGonum(t, p, pos, neg); (res.Verdict == Separable) != want {
					t.Errorf("verdict %s, gonum says separable = %v", res.Verdict, want)
				}
			})
		}
	}
}

// exactWeights solves, in rational arithmetic, Σλx − Σμx = 0, Σλ = 1,
// Σμ = 1 on the certificate's rows (points are their exact coordinates),
// and reports whether a solution with every weight ≥ 0 exists and is the
// only one: then the hulls of the two sides meet exactly. Gaussian
// elimination with exact pivots, from memory.
func exactWeights(points [][]*big.Rat, positive []bool) ([]*big.Rat, bool) {
	k, d := len(points), len(points[0])
	// Rows: the d coordinates, then the two sums; columns: the k weights,
	// then the right-hand side.
	m := make([][]*big.Rat, d+2)
	for i := range m {
		m[i] = make([]*big.Rat, k+1)
		for j := range m[i] {
			m[i][j] = new(big.Rat)
		}
	}
	for c, x := range points {
		for i, v := range x {
			if positive[c] {
				m[i][c].Set(v)
			} else {
				m[i][c].Neg(v)
			}
		}
		if positive[c] {
			m[d][c].SetInt64(1)
		} else {
			m[d+1][c].SetInt64(1)
		}
	}
	m[d][k].SetInt64(1)
	m[d+1][k].SetInt64(1)
	row := 0
	pivotCol := make([]int, 0, k)
	for c := 0; c < k && row < len(m); c++ {
		p := -1
		for r := row; r < len(m); r++ {
			if m[r][c].Sign() != 0 {
				p = r
				break
			}
		}
		if p < 0 {
			return nil, false // a free weight: not unique
		}
		m[row], m[p] = m[p], m[row]
		inv := new(big.Rat).Inv(m[row][c])
		for j := c; j <= k; j++ {
			m[row][j].Mul(m[row][j], inv)
		}
		for r := range m {
			if r == row || m[r][c].Sign() == 0 {
				continue
			}
			f := new(big.Rat).Set(m[r][c])
			for j := c; j <= k; j++ {
				m[r][j].Sub(m[r][j], new(big.Rat).Mul(f, m[row][j]))
			}
		}
		pivotCol = append(pivotCol, c)
		row++
	}
	if len(pivotCol) < k {
		return nil, false
	}
	for r := row; r < len(m); r++ { // consistency
		if m[r][k].Sign() != 0 {
			return nil, false
		}
	}
	w := make([]*big.Rat, k)
	for r, c := range pivotCol {
		w[c] = m[r][k]
		if w[c].Sign() < 0 {
			return w, false
		}
	}
	return w, true
}

// decimal reads a float64 back as the shortest decimal that prints as it,
// exactly: the value the CSV held.
func decimal(v float64) *big.Rat {
	r, ok := new(big.Rat).SetString(strconv.FormatFloat(v, 'g', -1, 64))
	if !ok {
		panic(v)
	}
	return r
}

// exact converts a float64 to the rational it is, exactly.
func exact(v float64) *big.Rat { return new(big.Rat).SetFloat64(v) }

func TestCertificatesExactly(t *testing.T) {
	// Every certificate is checked again in rational arithmetic on the data
	// as written: the raw cells of iris.csv as decimals (standardizing is
	// affine per column, so weights that balance the standardized rows
	// balance the raw ones), the 0/1 units of the encoded spaces exactly.
	type source struct {
		name  string
		d     *tabular.Dataset
		space Space
		plan  encode.Options
	}
	iris := readDataset(t, "iris.csv", "species")
	sources := []source{
		{"iris raw", iris, Raw, encode.Options{}},         // UCI iris.names: versicolor and virginica overlap
		{"iris encoded", iris, Encoded, encode.Options{}}, // the same data, thermometer:8
		{"xor encoded", readDataset(t, "xor.csv", "y"), Encoded, encode.Options{}},
		// Open data (testdata/open/PROVENANCE.md): seven numeric columns.
		{"birthwt raw", readDataset(t, "open/birthwt.csv", "low"), Raw, encode.Options{}},
	}
	for seed := uint64(1); seed <= 3; seed++ {
		sources = append(sources, source{fmt.Sprintf("chemistry-like seed %d", seed), chemistryLike(seed), Encoded, encode.Options{}})
	}
	certificates := 0
	for _, src := range sources {
		r, err := Check(context.Background(), src.d, CheckOptions{Space: src.space, Plan: src.plan, Pairs: true, Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		c, err := NewCoordinates(src.d, src.space, src.plan)
		if err != nil {
			t.Fatal(err)
		}
		for _, s := range r.Splits {
			t.Run(src.name+"/"+s.Positive+" against "+s.Negative, func(t *testing.T) {
				if !s.Verdict.Decided() {
					t.Fatalf("undecided: %s", s.Reason)
				}
				if s.Certificate == nil {
					checkWitnessExactly(t, src.d, c, s)
					return
				}
				certificates++
				cert := s.Certificate
				if len(cert.Rows) > len(r.Inputs)+2 {
					t.Errorf("%d rows, over inputs + 2 = %d (Carathéodory)", len(cert.Rows), len(r.Inputs)+2)
				}
				points := make([][]*big.Rat, len(cert.Rows))
				for i := range cert.Rows {
					for _, v := range cert.Values[i] { // the data's own units
						if src.space == Raw {
							points[i] = append(points[i], decimal(v))
						} else {
							points[i] = append(points[i], exact(v))
						}
					}
				}
				w, ok := exactWeights(points, cert.Positive)
				if !ok {
					t.Fatalf("rows %v: no unique non-negative exact weights (%v)", cert.Rows, w)
				}
				if !cert.Minimal {
					t.Errorf("certificate not marked minimal though its weights are unique")
				}
				for i, v := range w {
					f, _ := v.Float64()
					if math.Abs(f-cert.Weights[i]) > 1e-9 { // the float weights are the exact ones, rounded
						t.Errorf("row %d: weight %v, exactly %v", cert.Rows[i], cert.Weights[i], v.RatString())
					}
				}
			})
		}
	}
	if certificates < 10 {
		t.Errorf("only %d certificates checked; the sources should give more", certificates)
	}
}

// checkWitnessExactly recomputes w·x + b in rational arithmetic from the
// witness's float weights and the coordinates as stored, for every row of
// the split: the sign must be right with no rounding at all.
func checkWitnessExactly(t *testing.T, d *tabular.Dataset, c *Coordinates, s Split) {
	t.Helper()
	w := s.Witness
	bias := exact(w.Bias)
	weights := make([]*big.Rat, len(w.Weights))
	for j, v := range w.Weights {
		weights[j] = exact(v)
	}
	for row, class := range d.Classes {
		label := d.Labels[class]
		positive := label == s.Positive
		if !positive && s.Negative != Rest && label != s.Negative {
			continue
		}
		score := new(big.Rat).Set(bias)
		for j, v := range c.Points.Row(row) {
			score.Add(score, new(big.Rat).Mul(weights[j], exact(v)))
		}
		if (score.Sign() > 0) != positive || score.Sign() == 0 {
			t.Fatalf("row %d (%s) scores %s exactly", row+1, label, score.FloatString(20))
		}
	}
}
