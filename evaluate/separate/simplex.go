package separate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// This file is a revised simplex method (Dantzig 1963; the revised form of
// Dantzig & Orchard-Hays 1954) for linear programs in standard form,
//
//	minimise cᵀx  subject to  Ax = b,  x ≥ 0,
//
// with A held as sparse columns. The basis inverse B⁻¹ is kept explicitly,
// updated after each pivot in product form and recomputed from the basis
// every refactorEvery pivots. It is written for the hull program: few
// rows (the inputs plus two), many columns, 0/1 data with many ties.
//
// Degeneracy. On 0/1 patterns most vertices are degenerate, and a simplex
// with a smallest-index rule can take a very long time to leave them. This
// one solves with the right-hand side perturbed by tiny random amounts
// (Wolfe 1963; Charnes 1952), which makes every vertex non-degenerate with
// probability 1, and a two-pass ratio test (Harris 1973). The optimal basis
// of the perturbed program stays dual feasible when the perturbation is
// taken away, so a few dual simplex pivots (Lemke 1954) restore primal
// feasibility for the true right-hand side: that basis is optimal for the
// true program.
//
// Work is counted in pivots, primal and dual; past the budget the solve
// stops with errBudget, so the same program takes the same pivots and
// gives the same answer on any machine.

// sparseColumn is one column of A: its non-zero entries, rows ascending.
type sparseColumn struct {
	index []int
	value []float64
}

// linearProgram is min cᵀx, Ax = b, x ≥ 0 without its b, which the solver
// holds; columns may be added between solves.
type linearProgram struct {
	rows    int
	columns []sparseColumn
	cost    []float64
}

func (lp *linearProgram) add(col sparseColumn, cost float64) int {
	lp.columns = append(lp.columns, col)
	lp.cost = append(lp.cost, cost)
	return len(lp.columns) - 1
}

// Tolerances of the simplex. Entries of the hull program are 0/1 units or
// standardized values, so absolute tolerances suit them.
const (
	primalTolerance = 1e-9  // a basic value above −this is feasible
	dualTolerance   = 1e-9  // a reduced cost above −this is optimal
	pivotTolerance  = 1e-7  // the smallest pivot element taken
	refactorEvery   = 100   // most pivots between recomputations of B⁻¹
	driftTolerance  = 1e-9  // the most drift of B⁻¹ kept (see drift)
	devexReset      = 1e6   // the largest Devex weight before they restart at 1
	contextEvery    = 32    // pivots between looks at the context
	perturbation    = 1e-7  // size of the right-hand side perturbation
	unboundedLimit  = 1e300 // a step this long means the program is unbounded
)

// errBudget is returned when a solve runs out of pivots.
var errBudget = errors.New("separate: the pivot budget ran out")

// simplex is the state of a solve: a basis, its inverse, the values of
// the basic variables and the dual values.
type simplex struct {
	lp       *linearProgram
	m        int
	rhs      []float64
	basis    []int     // the column at each basis position
	position []int     // the basis position of each column, −1 if nonbasic
	inverse  []float64 // B⁻¹ column-major: entry (i, k) at inverse[k*m+i]
	values   []float64 // the basic variables, by position
	dual     []float64 // π = c_Bᵀ B⁻¹, by row
	alpha    []float64 // scratch: B⁻¹ a_q
	// dense and denseInverse are factor's buffers.
	dense        *mat.Dense
	denseInverse mat.Dense
	// reference holds the Devex reference weight of each column.
	reference   []float64
	work        *pivotBudget // shared with clones
	sinceFactor int
	ctx         context.Context
}

// pivotBudget counts the pivots of every solver of one split against a
// limit (≤ 0: none).
type pivotBudget struct {
	pivots, limit int
}

// newSimplex starts a solve of lp with right-hand side rhs from basis, which
// must be a feasible basis (its basic values non-negative). It panics if
// the basis does not have lp.rows columns.
func newSimplex(ctx context.Context, lp *linearProgram, rhs []float64, basis []int, work *pivotBudget) (*simplex, error) {
	if len(basis) != lp.rows {
		panic(fmt.Sprintf("separate: a basis of %d columns for %d rows", len(basis), lp.rows))
	}
	s := &simplex{lp: lp, m: lp.rows, rhs: append([]float64(nil), rhs...), basis: append([]int(nil), basis...),
		work: work, ctx: ctx}
	s.values = make([]float64, s.m)
	s.dual = make([]float64, s.m)
	s.alpha = make([]float64, s.m)
	s.inverse = make([]float64, s.m*s.m)
	s.syncColumns()
	if err := s.factor(); err != nil {
		return nil, err
	}
	return s, nil
}

// clone copies s, sharing the program and the budget.
func (s *simplex) clone() *simplex {
	c := *s
	c.rhs = append([]float64(nil), s.rhs...)
	c.basis = append([]int(nil), s.basis...)
	c.position = append([]int(nil), s.position...)
	c.inverse = append([]float64(nil), s.inverse...)
	c.values = append([]float64(nil), s.values...)
	c.dual = append([]float64(nil), s.dual...)
	c.alpha = make([]float64, s.m)
	c.reference = append([]float64(nil), s.reference...)
	c.dense, c.denseInverse = nil, mat.Dense{}
	return &c
}

// syncColumns extends position to columns added to the program since.
func (s *simplex) syncColumns() {
	if len(s.position) == len(s.lp.columns) {
		return
	}
	start := len(s.position)
	s.position = append(s.position, make([]int, len(s.lp.columns)-start)...)
	for j := start; j < len(s.position); j++ {
		s.position[j] = -1
	}
	for i, j := range s.basis {
		s.position[j] = i
	}
}

// factor recomputes B⁻¹ from the basis, then the basic values and duals.
func (s *simplex) factor() error {
	m := s.m
	if s.dense == nil {
		s.dense = mat.NewDense(m, m, nil)
	}
	b := s.dense
	b.Zero()
	for k, j := range s.basis {
		col := s.lp.columns[j]
		for t, i := range col.index {
			b.Set(i, k, col.value[t])
		}
	}
	inv := &s.denseInverse
	if err := inv.Inverse(b); err != nil {
		var cond mat.Condition
		if !errors.As(err, &cond) || float64(cond) > 1e14 {
			return fmt.Errorf("separate: the simplex basis became singular: %v", err)
		}
	}
	for k := 0; k < m; k++ {
		for i := 0; i < m; i++ {
			s.inverse[k*m+i] = inv.At(i, k)
		}
	}
	s.sinceFactor = 0
	s.computeValues()
	s.computeDual()
	return nil
}

// computeValues sets the basic values to B⁻¹ b.
func (s *simplex) computeValues() {
	clear(s.values)
	for k, v := range s.rhs {
		if v == 0 {
			continue
		}
		col := s.inverse[k*s.m : (k+1)*s.m]
		for i, x := range col {
			s.values[i] += v * x
		}
	}
}

// computeDual sets π = c_Bᵀ B⁻¹: π_k is the cost of the basis dotted with
// column k of B⁻¹.
func (s *simplex) computeDual() {
	for k := 0; k < s.m; k++ {
		col := s.inverse[k*s.m : (k+1)*s.m]
		sum := 0.0
		for i, x := range col {
			sum += s.lp.cost[s.basis[i]] * x
		}
		s.dual[k] = sum
	}
}

// reducedCost is c_j − πᵀ a_j.
func (s *simplex) reducedCost(j int) float64 {
	col := s.lp.columns[j]
	d := s.lp.cost[j]
	for t, i := range col.index {
		d -= s.dual[i] * col.value[t]
	}
	return d
}

// ftran sets alpha to B⁻¹ a_j.
func (s *simplex) ftran(j int) {
	clear(s.alpha)
	col := s.lp.columns[j]
	for t, k := range col.index {
		v := col.value[t]
		inv := s.inverse[k*s.m : (k+1)*s.m]
		for i, x := range inv {
			s.alpha[i] += v * x
		}
	}
}

// objective is c_Bᵀ x_B.
func (s *simplex) objective() float64 {
	sum := 0.0
	for i, v := range s.values {
		sum += s.lp.cost[s.basis[i]] * v
	}
	return sum
}

// spend counts one pivot against the budget and looks at the context.
func (s *simplex) spend() error {
	if s.work.limit > 0 && s.work.pivots >= s.work.limit {
		return errBudget
	}
	if s.work.pivots%contextEvery == 0 && s.ctx != nil {
		if err := s.ctx.Err(); err != nil {
			return err
		}
	}
	return nil
}

// pivot brings column q, of reduced cost dq, into the basis at position
// r, alpha holding B⁻¹ a_q, and gives it the value step. Row r of the new
// inverse is row r of the old one over α_r, and π moves by dq times it.
func (s *simplex) pivot(q, r int, dq, step float64) error {
	m := s.m
	floats.AddScaled(s.values, -step, s.alpha)
	s.values[r] = step
	ar := s.alpha[r]
	for k := 0; k < m; k++ {
		col := s.inverse[k*m : (k+1)*m]
		t := col[r] / ar
		if t != 0 {
			floats.AddScaled(col, -t, s.alpha)
			s.dual[k] += dq * t
		}
		col[r] = t
	}
	s.position[s.basis[r]] = -1
	s.basis[r], s.position[q] = q, r
	s.work.pivots++
	s.sinceFactor++
	if s.sinceFactor >= refactorEvery || s.drift(s.work.pivots%m) > driftTolerance {
		return s.factor()
	}
	return nil
}

// drift is how far B⁻¹ times the basic column at position i is from the
// unit vector e_i. Product-form updates multiply the rounding errors
// already in B⁻¹ by up to max|α|/|α_r| each, which on ill-conditioned
// 0/1 bases can grow them to order 1 within a few dozen pivots; one
// column a pivot, in turn, shows the drift long before then.
func (s *simplex) drift(i int) float64 {
	col := s.lp.columns[s.basis[i]]
	worst := 0.0
	clear(s.alpha)
	for t, k := range col.index {
		floats.AddScaled(s.alpha, col.value[t], s.inverse[k*s.m:(k+1)*s.m])
	}
	for k, a := range s.alpha {
		if k == i {
			a--
		}
		worst = max(worst, math.Abs(a))
	}
	return worst
}

// primal runs the primal simplex to optimality from the current basis,
// which must be feasible. The entering column has the largest d_j²/w_j
// among the negative reduced costs d_j, w_j its Devex reference weight
// (Harris 1973; Forrest & Goldfarb 1992), which approximates the norm of
// its edge and so prefers long steps over steep but short ones; the first
// of equals. The ratio test is two-pass (Harris 1973).
func (s *simplex) primal() error {
	s.syncColumns()
	for len(s.reference) < len(s.lp.columns) {
		s.reference = append(s.reference, 1)
	}
	rho := make([]float64, s.m)
	for {
		q, best, dq := -1, -1.0, 0.0
		for j := range s.lp.columns {
			if s.position[j] >= 0 {
				continue
			}
			if d := s.reducedCost(j); d < -dualTolerance && d*d/s.reference[j] > best {
				q, best, dq = j, d*d/s.reference[j], d
			}
		}
		if q < 0 {
			if s.sinceFactor == 0 {
				return nil
			}
			// Optimal on the updated inverse: confirm on a fresh one.
			if err := s.factor(); err != nil {
				return err
			}
			continue
		}
		if err := s.spend(); err != nil {
			return err
		}
		s.ftran(q)
		bound := math.Inf(1)
		for i, a := range s.alpha {
			if a > pivotTolerance {
				bound = min(bound, (s.values[i]+primalTolerance)/a)
			}
		}
		if bound > unboundedLimit {
			return errors.New("separate: the linear program is unbounded")
		}
		r, largest := -1, 0.0
		for i, a := range s.alpha {
			if a > pivotTolerance && s.values[i]/a <= bound && a > largest {
				r, largest = i, a
			}
		}
		// Devex: w_j ← max(w_j, (α_rj/α_rq)² w_q) along the pivot row, and
		// the leaving column gets max(w_q/α_rq², 1).
		for k := range rho {
			rho[k] = s.inverse[k*s.m+r]
		}
		wq, ar := s.reference[q], s.alpha[r]
		for j, col := range s.lp.columns {
			if s.position[j] >= 0 || j == q {
				continue
			}
			a := 0.0
			for t, i := range col.index {
				a += rho[i] * col.value[t]
			}
			if a != 0 {
				s.reference[j] = max(s.reference[j], (a/ar)*(a/ar)*wq)
			}
		}
		s.reference[s.basis[r]] = max(wq/(ar*ar), 1)
		if slices.Max(s.reference) > devexReset { // a new reference framework
			for j := range s.reference {
				s.reference[j] = 1
			}
		}
		if err := s.pivot(q, r, dq, max(s.values[r], 0)/s.alpha[r]); err != nil {
			return err
		}
	}
}

// restore sets the right-hand side to rhs and, the basis being dual
// feasible, runs the dual simplex until the basic values are feasible:
// the leaving row is the most negative value, the entering column the
// smallest ratio of reduced cost to pivot-row entry, two-pass (Harris).
func (s *simplex) restore(rhs []float64) error {
	copy(s.rhs, rhs)
	if err := s.factor(); err != nil {
		return err
	}
	rho := make([]float64, s.m)
	row := make([]float64, len(s.lp.columns))
	for {
		r, worst := -1, -primalTolerance
		for i, v := range s.values {
			if v < worst {
				r, worst = i, v
			}
		}
		if r < 0 {
			if s.sinceFactor == 0 {
				return nil
			}
			if err := s.factor(); err != nil {
				return err
			}
			continue
		}
		if err := s.spend(); err != nil {
			return err
		}
		for k := range rho {
			rho[k] = s.inverse[k*s.m+r]
		}
		bound := math.Inf(1)
		for j, col := range s.lp.columns {
			row[j] = 0
			if s.position[j] >= 0 {
				continue
			}
			a := 0.0
			for t, i := range col.index {
				a += rho[i] * col.value[t]
			}
			row[j] = a
			if a < -pivotTolerance {
				bound = min(bound, (max(s.reducedCost(j), 0)+dualTolerance)/-a)
			}
		}
		if math.IsInf(bound, 1) {
			return errors.New("separate: the linear program is infeasible")
		}
		q, largest := -1, 0.0
		for j, a := range row {
			if a < -pivotTolerance && max(s.reducedCost(j), 0)/-a <= bound && -a > largest {
				q, largest = j, -a
			}
		}
		s.ftran(q)
		if s.alpha[r] >= -pivotTolerance {
			return errors.New("separate: the dual simplex lost its pivot to rounding")
		}
		if err := s.pivot(q, r, s.reducedCost(q), s.values[r]/s.alpha[r]); err != nil {
			return err
		}
	}
}
