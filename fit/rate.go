package fit

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// maxEigenWidth is the widest pattern for which λmax comes from a full
// symmetric eigendecomposition of R; wider patterns use power iteration,
// which never forms R.
const maxEigenWidth = 2000

// AutoRate returns the automatic learning rate for patterns p, with the
// largest eigenvalue λmax and the trace of R = mean of x̃x̃ᵀ, x̃ = [x, 1].
//
// Online (batch false) the rate is 0.5/tr(R): per-pattern LMS stays inside
// its stability region for a fraction of 1/tr(R), and tr(R) ≥ λmax while
// convergence in the mean needs rate < 2/λmax (Widrow & Stearns 1985).
// Batch, the rate is 1/λmax, half the bound of gradient descent on the
// mean squared error.
//
// Bias-only patterns (Width 0) have R = [1]. Otherwise p must hold at
// least one pattern.
func AutoRate(p Patterns, batch bool) (rate, lambdaMax, traceR float64, err error) {
	if p.Width > 0 && len(p.Values) == 0 {
		return 0, 0, 0, errors.New("fit: no patterns")
	}
	if err := p.check(p.Len()); err != nil {
		return 0, 0, 0, err
	}
	return autoRate(p, batch)
}

// autoRate is AutoRate for patterns already checked.
func autoRate(p Patterns, batch bool) (rate, lambdaMax, traceR float64, err error) {
	lambdaMax, traceR, err = spectrum(p)
	if err != nil {
		return 0, 0, 0, err
	}
	if batch {
		return 1 / lambdaMax, lambdaMax, traceR, nil
	}
	return 0.5 / traceR, lambdaMax, traceR, nil
}

// spectrum returns λmax and tr(R) for the well-formed patterns p.
func spectrum(p Patterns) (lambdaMax, traceR float64, err error) {
	if p.Width == 0 {
		return 1, 1, nil
	}
	if p.Width > maxEigenWidth {
		return powerLambdaMax(p)
	}
	return eigenLambdaMax(p)
}

// eigenLambdaMax forms R with rank-k updates over blocks of patterns and
// takes its largest eigenvalue with mat.EigenSym.
func eigenLambdaMax(p Patterns) (lambdaMax, traceR float64, err error) {
	const blockRows = 256
	n, d := p.Len(), p.Width+1
	r := blas64.Symmetric{Uplo: blas.Upper, N: d, Stride: d, Data: make([]float64, d*d)}
	block := blas64.General{Cols: d, Stride: d, Data: make([]float64, min(n, blockRows)*d)}
	for start := 0; start < n; start += blockRows {
		block.Rows = min(blockRows, n-start)
		for k := range block.Rows {
			row := block.Data[k*d : (k+1)*d]
			copy(row, p.Row(start+k))
			row[d-1] = 1
		}
		blas64.Syrk(blas.Trans, 1/float64(n), block, 1, r)
	}
	for i := range d {
		traceR += r.Data[i*d+i]
	}
	var eigen mat.EigenSym
	if !eigen.Factorize(mat.NewSymDense(d, r.Data), false) {
		return 0, 0, errors.New("fit: eigendecomposition of the input correlation matrix failed")
	}
	values := eigen.Values(nil) // ascending
	return values[d-1], traceR, nil
}

// powerLambdaMax estimates λmax by power iteration with v ← Rv computed as
// the mean of x̃(x̃·v), never forming R. The Rayleigh quotient approaches
// λmax from below.
func powerLambdaMax(p Patterns) (lambdaMax, traceR float64, err error) {
	const (
		maxIterations = 500
		tolerance     = 1e-9
	)
	n, width := p.Len(), p.Width
	for i := range n {
		x := p.Row(i)
		traceR += dot(x, x) + 1
	}
	traceR /= float64(n)

	v := make([]float64, width+1)
	next := make([]float64, width+1)
	for i := range v {
		// A start with every component positive and unequal, so that it
		// is not orthogonal to the top eigenvector of an all-positive R.
		v[i] = 1 + float64(i)/float64(len(v))
	}
	scale(1/math.Sqrt(dot(v, v)), v)
	for range maxIterations {
		clear(next)
		for i := range n {
			x := p.Row(i)
			s := dot(x, v[:width]) + v[width]
			axpy(s, x, next[:width])
			next[width] += s
		}
		scale(1/float64(n), next)
		estimate := dot(v, next)
		norm := math.Sqrt(dot(next, next))
		if norm == 0 {
			break
		}
		scale(1/norm, next)
		v, next = next, v
		done := math.Abs(estimate-lambdaMax) <= tolerance*estimate
		lambdaMax = estimate
		if done {
			break
		}
	}
	if !(lambdaMax > 0) || math.IsInf(lambdaMax, 0) {
		return 0, 0, errors.New("fit: power iteration on the input correlation matrix failed")
	}
	return lambdaMax, traceR, nil
}
