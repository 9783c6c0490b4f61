package separate

import (
	"fmt"
	"math"
)

// This file checks proofs against the data, sharing nothing with the
// solver: a proof is accepted only when it holds here.

// certificateTolerance bounds the residual of an accepted certificate,
// relative to the largest input magnitude of its rows: the simplex solves
// are accurate to about 1e-13 of it, so this leaves room for rounding and
// none for a real gap between the hulls.
const certificateTolerance = 1e-9

// VerifyCertificate checks c against the rows of p: every row is on the
// side c says (positive and negative are 0-based pattern indexes), the
// weights are non-negative and sum to 1 on each side, and the weighted
// means coincide. It returns the residual ‖Σλx − Σμx‖∞, and an error
// saying what fails when c is not a valid certificate.
func VerifyCertificate(p Points, positive, negative []int, c *Certificate) (float64, error) {
	if len(c.Rows) != len(c.Weights) || len(c.Rows) != len(c.Positive) {
		return 0, fmt.Errorf("separate: certificate has %d rows, %d weights and %d sides", len(c.Rows), len(c.Weights), len(c.Positive))
	}
	side := make(map[int]bool, len(positive)+len(negative))
	for _, r := range positive {
		side[r+1] = true
	}
	for _, r := range negative {
		side[r+1] = false
	}
	diff := make([]float64, p.Width)
	var sums [2]float64
	size := 1.0
	for i, row := range c.Rows {
		onPositive, inSplit := side[row]
		if !inSplit || onPositive != c.Positive[i] {
			return 0, fmt.Errorf("separate: certificate row %d is not a row of its side of the split", row)
		}
		w := c.Weights[i]
		if !(w >= 0) || math.IsInf(w, 0) {
			return 0, fmt.Errorf("separate: certificate row %d has weight %v, not a finite non-negative number", row, w)
		}
		sign, k := 1.0, 0
		if !onPositive {
			sign, k = -1, 1
		}
		sums[k] += w
		for j, v := range p.Values[(row-1)*p.Width : row*p.Width] {
			diff[j] += sign * w * v
			size = max(size, math.Abs(v))
		}
	}
	for k, name := range []string{"positive", "negative"} {
		if math.Abs(sums[k]-1) > 1e-12*float64(len(c.Rows)) {
			return 0, fmt.Errorf("separate: certificate weights on the %s side sum to %v, not 1", name, sums[k])
		}
	}
	residual := 0.0
	for _, v := range diff {
		residual = max(residual, math.Abs(v))
	}
	if residual > certificateTolerance*size {
		return residual, fmt.Errorf("separate: certificate residual %.3g exceeds the tolerance %.3g: the weighted means do not coincide", residual, certificateTolerance*size)
	}
	return residual, nil
}

// VerifyWitness checks that w puts every positive row strictly above the
// hyperplane and every negative row strictly below it, by more than the
// rounding error of the score (a forward error bound for a sum of D+1
// products, Higham 2002 §3.1). It returns the margin min |w·x+b| / ‖w‖₂
// and the number of rows checked, and an error naming the first row on the
// wrong side.
func VerifyWitness(p Points, positive, negative []int, w *Witness) (margin float64, rows int, err error) {
	if len(w.Weights) != p.Width {
		return 0, 0, fmt.Errorf("separate: witness has %d weights for %d inputs", len(w.Weights), p.Width)
	}
	norm := 0.0
	for _, v := range w.Weights {
		norm += v * v
	}
	norm = math.Sqrt(norm)
	if !(norm > 0) || math.IsInf(norm, 0) || math.IsNaN(w.Bias) || math.IsInf(w.Bias, 0) {
		return 0, 0, fmt.Errorf("separate: witness weights or bias are zero or not finite")
	}
	unit := 2 * float64(p.Width+1) * 0x1p-53
	least := math.Inf(1)
	for k, side := range [][]int{positive, negative} {
		for _, r := range side {
			score, bound := w.Bias, math.Abs(w.Bias)
			for j, v := range p.Values[r*p.Width : (r+1)*p.Width] {
				score += w.Weights[j] * v
				bound += math.Abs(w.Weights[j] * v)
			}
			if k == 1 {
				score = -score
			}
			if !(score > unit*bound) {
				return 0, rows, fmt.Errorf("separate: witness puts row %d on the wrong side of the hyperplane (or on it)", r+1)
			}
			least = min(least, score)
			rows++
		}
	}
	return least / norm, rows, nil
}
