package fit

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// maxEigenWidth is the widest pattern for which λmax comes from a full
// symmetric eigendecomposition of R; wider patterns use power iteration,
// which never forms R.
const maxEigenWidth = 2000

// AutoRate returns the automatic learning rate for the patterns of p, with
// the largest eigenvalue λmax and the trace of R = mean of x̃x̃ᵀ, x̃ = [x, 1].
//
// Online (batch false) the rate is 0.5/tr(R): per-pattern LMS stays inside
// its stability region for a fraction of 1/tr(R), and tr(R) ≥ λmax while
// convergence in the mean needs rate < 2/λmax (Widrow & Stearns 1985).
// Batch, the rate is 1/λmax, half the bound of gradient descent on the
// mean squared error.
//
// Bias-only patterns (no inputs) have R = [1]. Otherwise p must hold at
// least one pattern.
func AutoRate(p Store, batch bool) (rate, lambdaMax, traceR float64, err error) {
	if p.Inputs() > 0 && p.Len() == 0 {
		return 0, 0, 0, errors.New("fit: no patterns")
	}
	if err := checkStore(p, p.Len()); err != nil {
		return 0, 0, 0, err
	}
	return autoRate(context.Background(), p, batch)
}

// autoRate is AutoRate for patterns already checked. It stops with an
// error wrapping ctx.Err() once ctx is done.
func autoRate(ctx context.Context, p Store, batch bool) (rate, lambdaMax, traceR float64, err error) {
	lambdaMax, traceR, err = spectrum(ctx, p)
	if err != nil {
		return 0, 0, 0, err
	}
	if batch {
		return 1 / lambdaMax, lambdaMax, traceR, nil
	}
	return 0.5 / traceR, lambdaMax, traceR, nil
}

// spectrum returns λmax and tr(R) for the well-formed patterns p.
func spectrum(ctx context.Context, p Store) (lambdaMax, traceR float64, err error) {
	switch width := p.Inputs(); {
	case width == 0:
		return 1, 1, nil
	case width > maxEigenWidth:
		return powerLambdaMax(ctx, p)
	}
	return eigenLambdaMax(ctx, p)
}

// rateStopped returns the error of an automatic rate whose context is
// done, or nil.
func rateStopped(ctx context.Context) error {
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("fit: automatic rate stopped: %w", err)
	}
	return nil
}

// eigenLambdaMax forms R with rank-k updates over blocks of patterns and
// takes its largest eigenvalue with mat.EigenSym.
func eigenLambdaMax(ctx context.Context, p Store) (lambdaMax, traceR float64, err error) {
	const blockRows = 256
	n, d := p.Len(), p.Inputs()+1
	r := blas64.Symmetric{Uplo: blas.Upper, N: d, Stride: d, Data: make([]float64, d*d)}
	block := blas64.General{Cols: d, Stride: d, Data: make([]float64, min(n, blockRows)*d)}
	for start := 0; start < n; start += blockRows {
		if start%ctxRows == 0 {
			if err := rateStopped(ctx); err != nil {
				return 0, 0, err
			}
		}
		block.Rows = min(blockRows, n-start)
		for k := range block.Rows {
			row := block.Data[k*d : (k+1)*d]
			// A store that copies writes the pattern in place; copy is
			// then a no-op.
			copy(row, p.RowTo(row[:d-1], start+k))
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
func powerLambdaMax(ctx context.Context, p Store) (lambdaMax, traceR float64, err error) {
	const (
		maxIterations = 500
		tolerance     = 1e-9
	)
	n, width := p.Len(), p.Inputs()
	buf := make([]float64, width)
	for i := range n {
		x := p.RowTo(buf, i)
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
		if err := rateStopped(ctx); err != nil {
			return 0, 0, err
		}
		clear(next)
		for i := range n {
			x := p.RowTo(buf, i)
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
