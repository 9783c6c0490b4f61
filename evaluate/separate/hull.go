package separate

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
)

// The hull program. For the positive rows P and negative rows Q, over the
// D coordinates that vary on them, it finds convex weights λ on P and μ on
// Q that bring the weighted means closest in the L1 norm:
//
//	minimise   Σ s⁺ + Σ s⁻
//	subject to Σ λ_i x_i − Σ μ_j x_j + s⁺ − s⁻ = 0   (one row per input)
//	           Σ λ_i = 1,  Σ μ_j = 1,  λ, μ, s⁺, s⁻ ≥ 0.
//
// It has D+2 rows however many rows the data has, and the first row of
// each side with one slack per input is a feasible starting basis, so no
// Phase I search is needed.
//
// Optimum 0: the hulls meet, and a basic solution uses at most D+2 rows
// (Carathéodory), which is the certificate. Optimum > 0: the hulls are
// apart, and the program's dual
//
//	maximise α + β  subject to  y·x_i + α ≤ 0 (P),  −y·x_j + β ≤ 0 (Q),  |y|∞ ≤ 1
//
// gives a direction −y along which every positive row scores above every
// negative one; that is the witness. Any dual-feasible y with α + β > 0
// separates the rows of the program, optimal or not, so the direction is
// read off at the optimum of the perturbed program, and the perturbation is
// taken away (restore) only when it does not separate them.

// Working set sizes: up to wholeProgram distinct rows the hull program
// takes every row at once; above, it starts from startRows rows per side
// and grows.
const (
	wholeProgram = 1000
	startRows    = 250
)

// negligibleWeight is the largest certificate weight read as zero: the
// simplex leaves round-off such as 3e-17 on degenerate basic columns.
const negligibleWeight = 1e-12

// hullSearch solves the hull program of one split on a growing working
// set of its distinct rows. A certificate found on a subset holds for the
// whole split (a subset's hull lies inside the whole hull); a direction
// found on a subset is tried on every row, and the rows on its wrong side
// join the set, the worst first, which warm-starts from the last basis:
// the new columns enter as nonbasic, and the basis stays feasible.
type hullSearch struct {
	ctx    context.Context
	p      Points
	active []int
	budget *pivotBudget
	seed   uint64

	lp       *linearProgram
	rows     []int  // the data row of each pattern column, from slacks() on
	positive []bool // its side
	inWork   map[int]bool
	solver   *simplex
	rhs      []float64 // the true right-hand side: 0 …, 1, 1

	// distance is the hull distance of the last working set solved
	// without perturbation.
	distance float64
}

func newHullSearch(ctx context.Context, p Points, active []int, budget *pivotBudget, seed uint64) *hullSearch {
	return &hullSearch{ctx: ctx, p: p, active: active, budget: budget, seed: seed, inWork: map[int]bool{}}
}

// slacks is the number of slack columns, which come first.
func (h *hullSearch) slacks() int { return 2 * len(h.active) }

// addRow adds the column of a data row to the program.
func (h *hullSearch) addRow(r int, positive bool) int {
	d := len(h.active)
	row := h.p.Row(r)
	var col sparseColumn
	sign, sum := 1.0, d
	if !positive {
		sign, sum = -1, d+1
	}
	for k, j := range h.active {
		if v := row[j]; v != 0 {
			col.index = append(col.index, k)
			col.value = append(col.value, sign*v)
		}
	}
	col.index = append(col.index, sum)
	col.value = append(col.value, 1)
	h.rows = append(h.rows, r)
	h.positive = append(h.positive, positive)
	h.inWork[r] = true
	return h.lp.add(col, 0)
}

// start builds the program on the working set and its first basis.
func (h *hullSearch) start(workPos, workNeg []int) error {
	d := len(h.active)
	h.lp = &linearProgram{rows: d + 2}
	for k := 0; k < d; k++ {
		h.lp.add(sparseColumn{index: []int{k}, value: []float64{1}}, 1)
		h.lp.add(sparseColumn{index: []int{k}, value: []float64{-1}}, 1)
	}
	for _, r := range workPos {
		h.addRow(r, true)
	}
	for _, r := range workNeg {
		h.addRow(r, false)
	}
	h.rhs = make([]float64, d+2)
	h.rhs[d], h.rhs[d+1] = 1, 1
	// The perturbation: tiny, seeded, of both signs on the input rows and
	// positive on the two sums.
	rng := rand.New(rand.NewPCG(h.seed, 0x9e3779b97f4a7c15))
	perturbed := slices.Clone(h.rhs)
	size := perturbation * scale(h.p, workPos, workNeg)
	for i := range perturbed {
		u := 0.5 + rng.Float64()
		if i < d && rng.IntN(2) == 0 {
			u = -u
		}
		perturbed[i] += size * u
		if i >= d {
			perturbed[i] = h.rhs[i] + perturbation*u
		}
	}
	// λ on the first positive row and μ on the first negative one; each
	// input's slack takes up what is left: s⁺ if it is ≥ 0, else s⁻.
	first, second := h.p.Row(workPos[0]), h.p.Row(workNeg[0])
	basis := make([]int, d+2)
	for k, j := range h.active {
		basis[k] = 2 * k
		if perturbed[k]-(first[j]*perturbed[d]-second[j]*perturbed[d+1]) < 0 {
			basis[k] = 2*k + 1
		}
	}
	basis[d], basis[d+1] = h.slacks(), h.slacks()+len(workPos)
	var err error
	h.solver, err = newSimplex(h.ctx, h.lp, perturbed, basis, h.budget)
	return err
}

// run decides the split of the distinct rows pos and neg: a certificate
// (rows 1-based, weights per side summing to 1) or a witness.
func (h *hullSearch) run(pos, neg []int) (*Certificate, *Witness, error) {
	workPos, workNeg := pos, neg
	if len(pos)+len(neg) > wholeProgram {
		workPos, workNeg = spread(pos, startRows), spread(neg, startRows)
	}
	if err := h.start(workPos, workNeg); err != nil {
		return nil, nil, err
	}
	zero := zeroDistance(h.p, len(h.active), pos, neg)
	for {
		if err := h.solver.primal(); err != nil {
			return nil, nil, err
		}
		weights := h.direction(h.solver)
		if !h.separatesWork(weights) {
			// The perturbed optimum does not separate the working set:
			// take the perturbation away and read the true optimum.
			exact := h.solver.clone()
			if err := exact.restore(h.rhs); err != nil {
				return nil, nil, err
			}
			h.distance = exact.objective()
			if h.distance <= zero {
				return h.certificate(exact), nil, nil
			}
			weights = h.direction(exact)
			if !h.separatesWork(weights) {
				return nil, nil, fmt.Errorf("separate: the direction read off the hull program does not separate its own rows (hull distance %.3g)", h.distance)
			}
		}
		low, high := scoreRange(h.p, weights, pos, neg)
		if low > high {
			return nil, &Witness{Weights: weights, Bias: -(low + high) / 2}, nil
		}
		if h.grow(weights, pos, neg) == 0 {
			return nil, nil, errors.New("separate: the working set stopped growing before its hyperplane separated every row")
		}
	}
}

// direction reads the direction −y off the duals of s, over the full width.
func (h *hullSearch) direction(s *simplex) []float64 {
	weights := make([]float64, h.p.Width)
	for k, j := range h.active {
		weights[j] = -s.dual[k]
	}
	return weights
}

// separatesWork reports whether weights puts every positive row of the
// working set above every negative one.
func (h *hullSearch) separatesWork(weights []float64) bool {
	var pos, neg []int
	for c, r := range h.rows {
		if h.positive[c] {
			pos = append(pos, r)
		} else {
			neg = append(neg, r)
		}
	}
	low, high := scoreRange(h.p, weights, pos, neg)
	return low > high
}

// grow adds to the working set the rows outside it on the wrong side of
// the hyperplane midway between the working set's sides, the worst first,
// at most max(D+2, 50) per side, and returns how many it added.
func (h *hullSearch) grow(weights []float64, pos, neg []int) int {
	var workPos, workNeg []int
	for c, r := range h.rows {
		if h.positive[c] {
			workPos = append(workPos, r)
		} else {
			workNeg = append(workNeg, r)
		}
	}
	low, high := scoreRange(h.p, weights, workPos, workNeg)
	cut := (low + high) / 2
	most := max(len(h.active)+2, 50)
	added := 0
	for k, side := range [][]int{pos, neg} {
		type miss struct {
			row   int
			depth float64
		}
		var wrong []miss
		for _, r := range side {
			s := dot(weights, h.p.Row(r)) - cut
			if k == 1 {
				s = -s
			}
			if s <= 0 && !h.inWork[r] {
				wrong = append(wrong, miss{r, s})
			}
		}
		slices.SortStableFunc(wrong, func(a, b miss) int { return cmp.Compare(a.depth, b.depth) })
		for _, m := range wrong[:min(most, len(wrong))] {
			h.addRow(m.row, k == 0)
			added++
		}
	}
	return added
}

// certificate reads the convex weights off the basic pattern columns of s,
// dropping negligible weights and rescaling each side to sum to 1; each
// side's rows are in ascending order, positive first.
func (h *hullSearch) certificate(s *simplex) *Certificate {
	type weighted struct {
		row    int
		weight float64
	}
	var sides [2][]weighted
	var totals [2]float64
	for i, j := range s.basis {
		if j < h.slacks() || s.values[i] <= negligibleWeight {
			continue
		}
		c := j - h.slacks()
		k := 0
		if !h.positive[c] {
			k = 1
		}
		sides[k] = append(sides[k], weighted{h.rows[c], s.values[i]})
		totals[k] += s.values[i]
	}
	c := &Certificate{}
	for k, side := range sides {
		slices.SortFunc(side, func(a, b weighted) int { return a.row - b.row })
		for _, w := range side {
			c.Rows = append(c.Rows, w.row+1)
			c.Positive = append(c.Positive, k == 0)
			c.Weights = append(c.Weights, w.weight/totals[k])
		}
	}
	return c
}

// learned says what a search cut short knows: the fewest rows a
// hyperplane of the error-correction passes misplaced, and the L1 distance
// between the nearest points of the two hulls found so far (an upper bound
// on the hull distance).
func (h *hullSearch) learned(pass correction, rows int) string {
	text := fmt.Sprintf("so far the best hyperplane found misplaces %d of %d distinct rows", pass.errors, rows)
	if h.solver == nil {
		return text
	}
	point := make([]float64, h.p.Width)
	var totals [2]float64
	for i, j := range h.solver.basis {
		if j >= h.slacks() && h.solver.values[i] > 0 {
			c := j - h.slacks()
			if h.positive[c] {
				totals[0] += h.solver.values[i]
			} else {
				totals[1] += h.solver.values[i]
			}
		}
	}
	if !(totals[0] > 0 && totals[1] > 0) {
		return text
	}
	for i, j := range h.solver.basis {
		if j >= h.slacks() && h.solver.values[i] > 0 {
			c := j - h.slacks()
			sign, total := 1.0, totals[0]
			if !h.positive[c] {
				sign, total = -1, totals[1]
			}
			for k, v := range h.p.Row(h.rows[c]) {
				point[k] += sign * h.solver.values[i] / total * v
			}
		}
	}
	gap := 0.0
	for _, v := range point {
		gap += math.Abs(v)
	}
	return fmt.Sprintf("%s, and the nearest points of the two hulls found are %.4g apart (L1 norm, in the coordinates of the space), an upper bound on the hull distance", text, gap)
}

// spread returns at most n of rows, evenly spaced.
func spread(rows []int, n int) []int {
	if len(rows) <= n {
		return slices.Clone(rows)
	}
	picked := make([]int, n)
	for i := range picked {
		picked[i] = rows[i*len(rows)/n]
	}
	return picked
}

// zeroDistance is the hull distance below which the hulls are taken to
// meet and a certificate is read off: well above the rounding of the
// simplex solves, well below any distance real data shows. The
// certificate is verified after.
func zeroDistance(p Points, inputs int, pos, neg []int) float64 {
	return 1e-9 * scale(p, pos, neg) * float64(max(1, inputs))
}
