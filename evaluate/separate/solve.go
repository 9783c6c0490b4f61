package separate

import (
	"errors"
	"fmt"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize/convex/lp"

	"deltafit/fit"
)

// The hull program. For the positive rows P and negative rows Q it finds
// convex weights λ on P and μ on Q that bring the weighted means closest
// in the L1 norm:
//
//	minimise   Σ s⁺ + Σ s⁻
//	subject to Σ λ_i x_i − Σ μ_j x_j + s⁺ − s⁻ = e   (one row per input)
//	           Σ λ_i = 1,  Σ μ_j = 1,  λ, μ, s⁺, s⁻ ≥ 0,
//
// with e = 0 (or a tiny perturbation, see witness). It has D+2 rows
// however many rows the data has, the slack columns make it full row rank
// with no zero column, and the first row of each side with one slack per
// input is a feasible starting basis, so no Phase I search is needed.
//
// Optimum 0: the hulls meet, and a basic solution uses at most D+2 rows
// (Carathéodory), which is the certificate. Optimum > 0: the hulls are
// apart, and the program's dual
//
//	maximise α + β  subject to  y·x_i + α ≤ 0 (P),  −y·x_j + β ≤ 0 (Q),  |y|∞ ≤ 1
//
// gives a direction −y along which every positive row scores above every
// negative one; that is the witness.

// hull is one solved hull program.
type hull struct {
	pos, neg []int // rows behind the λ and μ columns, in column order
	width    int
	a        *mat.Dense
	cost     []float64
	x        []float64 // the optimal vertex
	distance float64   // its objective value
}

// solveHull builds and solves the hull program for the rows pos and neg;
// perturb is e, nil meaning 0.
func solveHull(p fit.Store, pos, neg []int, perturb []float64) (*hull, error) {
	d := p.Inputs()
	m, n := d+2, len(pos)+len(neg)+2*d
	buf := make([]float64, d)
	h := &hull{pos: pos, neg: neg, width: d, a: mat.NewDense(m, n, nil), cost: make([]float64, n)}
	for c, r := range pos {
		for j, v := range p.RowTo(buf, r) {
			h.a.Set(j, c, v)
		}
		h.a.Set(d, c, 1)
	}
	for c, r := range neg {
		for j, v := range p.RowTo(buf, r) {
			h.a.Set(j, len(pos)+c, -v)
		}
		h.a.Set(d+1, len(pos)+c, 1)
	}
	slack := len(pos) + len(neg)
	b := make([]float64, m)
	b[d], b[d+1] = 1, 1
	basis := []int{0, len(pos)}
	first := slices.Clone(p.RowTo(buf, pos[0])) // the rows of the starting basis
	firstNeg := p.RowTo(buf, neg[0])
	for j := 0; j < d; j++ {
		h.a.Set(j, slack+j, 1)
		h.a.Set(j, slack+d+j, -1)
		h.cost[slack+j], h.cost[slack+d+j] = 1, 1
		if perturb != nil {
			b[j] = perturb[j]
		}
		// With λ on pos[0] and μ on neg[0] at 1, the slack of input j
		// takes up b_j − (x_j − x'_j): s⁺ if that is ≥ 0, else s⁻.
		if b[j]-(first[j]-firstNeg[j]) >= 0 {
			basis = append(basis, slack+j)
		} else {
			basis = append(basis, slack+d+j)
		}
	}
	var err error
	h.distance, h.x, err = simplex(h.cost, h.a, b, basis)
	if err != nil {
		return nil, err
	}
	return h, nil
}

// solveHullRetry solves the hull program, and when the simplex fails
// (a pivot can make the basis numerically singular on degenerate data)
// tries again twice with the columns in a seeded random order, which
// changes the pivots it takes.
func solveHullRetry(p fit.Store, pos, neg []int, seed uint64) (*hull, error) {
	h, err := solveHull(p, pos, neg, nil)
	for attempt := uint64(1); err != nil && attempt <= 2; attempt++ {
		rng := rand.New(rand.NewPCG(seed, attempt))
		pos, neg = slices.Clone(pos), slices.Clone(neg)
		rng.Shuffle(len(pos), func(i, j int) { pos[i], pos[j] = pos[j], pos[i] })
		rng.Shuffle(len(neg), func(i, j int) { neg[i], neg[j] = neg[j], neg[i] })
		h, err = solveHull(p, pos, neg, nil)
	}
	return h, err
}

// simplex calls lp.Simplex, turning its panics (which a wrong start or
// shape causes) into errors.
func simplex(cost []float64, a *mat.Dense, b []float64, basis []int) (opt float64, x []float64, err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("separate: linear program failed: %v", r)
		}
	}()
	opt, x, err = lp.Simplex(cost, a, b, 1e-10, basis)
	if err != nil {
		return 0, nil, fmt.Errorf("separate: linear program failed: %w", err)
	}
	return opt, x, nil
}

// negligibleWeight is the largest vertex weight read as zero: the simplex
// leaves round-off such as 3e-17 on rows outside the certificate. Dropping
// them moves the weighted means by far less than the verification
// tolerance, and the certificate is verified after the drop.
const negligibleWeight = 1e-12

// certificate reads the convex weights off the optimal vertex, dropping
// negligible weights and rescaling each side to sum to 1; each side's rows
// are in ascending order.
func (h *hull) certificate() *Certificate {
	c := &Certificate{}
	add := func(rows []int, weights []float64, positive bool) {
		total := 0.0
		var kept []int
		for i, w := range weights {
			if w > negligibleWeight {
				total += w
				kept = append(kept, i)
			}
		}
		slices.SortFunc(kept, func(a, b int) int { return rows[a] - rows[b] })
		for _, i := range kept {
			c.Rows = append(c.Rows, rows[i]+1)
			c.Positive = append(c.Positive, positive)
			c.Weights = append(c.Weights, weights[i]/total)
		}
	}
	add(h.pos, h.x[:len(h.pos)], true)
	add(h.neg, h.x[len(h.pos):len(h.pos)+len(h.neg)], false)
	return c
}

// errDegenerate is why a witness could not be read off the program.
var errDegenerate = errors.New("separate: the hull program's optimal vertex is degenerate even after perturbation; its dual is not determined")

// direction reads the separating direction off the dual of the program,
// at the optimal basis: every positive row scores above every negative
// one along it, on the rows of the program. A degenerate vertex (fewer
// than D+2 non-zero values) does not name its basis, so the program is
// solved again with a tiny seeded perturbation of e, which makes the
// vertex non-degenerate; the dual of a basis does not depend on e, and
// neither does its optimality.
func (h *hull) direction(p fit.Store, seed uint64) ([]float64, error) {
	m := h.width + 2
	basis := nonZero(h.x)
	if len(basis) != m {
		rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
		size := 1e-7 * scale(p)
		perturb := make([]float64, h.width)
		for j := range perturb {
			perturb[j] = size * (2*rng.Float64() - 1)
		}
		again, err := solveHull(p, h.pos, h.neg, perturb)
		if err != nil {
			return nil, err
		}
		if basis = nonZero(again.x); len(basis) != m {
			return nil, errDegenerate
		}
	}
	columns := mat.NewDense(m, m, nil)
	costs := mat.NewVecDense(m, nil)
	for i, c := range basis {
		columns.SetCol(i, mat.Col(nil, c, h.a))
		costs.SetVec(i, h.cost[c])
	}
	var dual mat.VecDense
	if err := dual.SolveVec(columns.T(), costs); err != nil {
		return nil, fmt.Errorf("separate: the optimal basis of the hull program is singular: %v", err)
	}
	weights := make([]float64, h.width)
	for j := range weights {
		weights[j] = -dual.AtVec(j)
	}
	return weights, nil
}

// nonZero returns the indexes of the non-zero values: at a vertex returned
// by lp.Simplex, the basic variables unless some of them are 0.
func nonZero(x []float64) []int {
	var idx []int
	for i, v := range x {
		if v != 0 {
			idx = append(idx, i)
		}
	}
	return idx
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i, v := range a {
		s += v * b[i]
	}
	return s
}
