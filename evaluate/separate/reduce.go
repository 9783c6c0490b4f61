package separate

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// reduceCertificate shrinks c to a support whose columns
//
//	a_i = (x_i, 1, 0) for a positive row,  (−x_i, 0, 1) for a negative row,
//
// over the coordinates active, are linearly independent, and solves the
// weights again on that support. While the columns are dependent there is
// a z ≠ 0 with Az = 0; moving the weights along −z keeps Aw = (0, 1, 1)
// and drives one of them to 0, which drops its row (Carathéodory's
// theorem, in the form of its usual proof). On independent columns the
// weights are unique, so no row can be dropped from the result: its
// support is minimal, and has at most len(active)+2 rows. The weights are
// then the least-squares solution on the support, which for a consistent
// system is the exact one up to rounding.
//
// When the least-squares weights are not all ≥ 0 (which rounding in the
// simplex could cause) c is returned unchanged, not marked minimal; it is
// verified either way.
func reduceCertificate(p Points, active []int, c *Certificate) *Certificate {
	m := len(active) + 2
	rows, positive, weights := slices.Clone(c.Rows), slices.Clone(c.Positive), slices.Clone(c.Weights)
	columns := func() *mat.Dense {
		a := mat.NewDense(m, len(rows), nil)
		for i, row := range rows {
			x := p.Row(row - 1)
			sign, sum := 1.0, len(active)
			if !positive[i] {
				sign, sum = -1, len(active)+1
			}
			for k, j := range active {
				a.Set(k, i, sign*x[j])
			}
			a.Set(sum, i, 1)
		}
		return a
	}
	independent := false
	for len(rows) > 2 {
		a := columns()
		var svd mat.SVD
		if !svd.Factorize(a, mat.SVDFull) {
			return c
		}
		rank := svd.Rank(1e-10)
		if rank >= len(rows) {
			independent = true
			break
		}
		var v mat.Dense
		svd.VTo(&v)
		// A null vector: the right singular vector of the smallest
		// singular value (the last column of V when there are fewer rows
		// than columns too).
		z := mat.Col(nil, len(rows)-1, &v)
		if !slices.ContainsFunc(z, func(x float64) bool { return x > 1e-12 }) {
			for i := range z {
				z[i] = -z[i]
			}
		}
		step, drop := 0.0, -1
		for i, zi := range z {
			if zi > 1e-12 && (drop < 0 || weights[i]/zi < step) {
				step, drop = weights[i]/zi, i
			}
		}
		if drop < 0 {
			return c
		}
		for i := range weights {
			weights[i] -= step * z[i]
		}
		weights[drop] = 0
		keep := 0
		for i := range rows {
			if weights[i] > negligibleWeight {
				rows[keep], positive[keep], weights[keep] = rows[i], positive[i], weights[i]
				keep++
			}
		}
		rows, positive, weights = rows[:keep], positive[:keep], weights[:keep]
	}
	if len(rows) <= 2 { // one row on each side: always independent
		independent = true
	}
	// The exact weights on the support, unless the weights carried over
	// meet the equations more closely.
	a := columns()
	if len(rows) == len(c.Rows) && residual(a, weights) <= residual(a, solved(a, m)) {
		c.Minimal = independent
		return c
	}
	w := solved(a, m)
	if w == nil {
		return c
	}
	var totals [2]float64
	for i := range rows {
		v := w[i]
		if v < -negligibleWeight {
			return c
		}
		weights[i] = max(v, 0)
		if positive[i] {
			totals[0] += weights[i]
		} else {
			totals[1] += weights[i]
		}
	}
	if !(totals[0] > 0 && totals[1] > 0) {
		return c
	}
	out := &Certificate{Minimal: independent}
	for i := range rows {
		if weights[i] == 0 {
			continue
		}
		k := 0
		if !positive[i] {
			k = 1
		}
		out.Rows = append(out.Rows, rows[i])
		out.Positive = append(out.Positive, positive[i])
		out.Weights = append(out.Weights, weights[i]/totals[k])
	}
	return out
}

// solved returns the least-squares solution of a·w = (0, …, 0, 1, 1), nil
// if a is rank deficient.
func solved(a *mat.Dense, m int) []float64 {
	b := mat.NewVecDense(m, nil)
	b.SetVec(m-2, 1)
	b.SetVec(m-1, 1)
	var w mat.VecDense
	if err := w.SolveVec(a, b); err != nil {
		return nil
	}
	return w.RawVector().Data
}

// residual is ‖a·w − (0, …, 0, 1, 1)‖∞, +Inf for nil weights.
func residual(a *mat.Dense, w []float64) float64 {
	if w == nil {
		return math.Inf(1)
	}
	m, _ := a.Dims()
	var r mat.VecDense
	r.MulVec(a, mat.NewVecDense(len(w), slices.Clone(w)))
	worst := 0.0
	for i := 0; i < m; i++ {
		want := 0.0
		if i >= m-2 {
			want = 1
		}
		worst = max(worst, math.Abs(r.AtVec(i)-want))
	}
	return worst
}
