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

// autoEta is the automatic online rate's step relative to the largest
// row, η in η/(max‖x̃‖² + L2): 1, half the every-row bound of 2.
const autoEta = 1.0

// Names of the stability bounds a rate is held to (Result.Bound).
const (
	// BoundEveryRow holds online training: rate·(max‖x̃‖² + L2) < 2,
	// under which one pattern's update shrinks that pattern's error for
	// every pattern, not only on average (normalized LMS, Nagumo & Noda
	// 1967: a step η/‖x̃‖² with 0 < η < 2).
	BoundEveryRow = "every-row"
	// BoundMean holds batch training: rate·(λmax + L2) < 2, under which
	// gradient descent on the mean squared error converges (Widrow &
	// Stearns 1985).
	BoundMean = "mean"
	// BoundNone is given for a OnePass rule, whose weights are the rate
	// times the summed updates: no rate makes them diverge.
	BoundNone = "none"
)

// Spectrum holds the sizes of a set of patterns that bound a stable
// learning rate, all of x̃ = [x, 1].
type Spectrum struct {
	LambdaMax float64 // largest eigenvalue of R = mean of x̃x̃ᵀ
	TraceR    float64 // tr(R), the mean of ‖x̃‖²
	RowMax    float64 // the largest ‖x̃‖² of any pattern
}

// Bound returns the bound the learning rate of a run with opts must stay
// below, and its name: 2/(RowMax + L2) online (BoundEveryRow), 2/(λmax +
// L2) with opts.Batch (BoundMean), 0 and BoundNone for a OnePass rule.
// RowMax ≥ tr(R) ≥ λmax, so the online bound is the tighter one.
func (s Spectrum) Bound(opts Options) (bound float64, name string) {
	switch {
	case isOnePass(opts.Rule):
		return 0, BoundNone
	case opts.Batch:
		return 2 / (s.LambdaMax + opts.L2), BoundMean
	}
	return 2 / (s.RowMax + opts.L2), BoundEveryRow
}

// AutoRate returns the automatic learning rate of a run with opts on the
// patterns of p, and the spectrum it is read from. Only opts.Rule,
// opts.Batch and opts.L2 are read.
//
// Online the rate is 1/(max‖x̃‖² + L2), half the every-row bound, so
// that no single pattern, however far out, makes an update overshoot
// (Nagumo & Noda 1967; Bach & Moulines 2013 bound their averaged
// constant-step LMS the same way, by the largest ‖x̃‖²). A rate per row,
// η/‖x̃_i‖² as in normalized LMS, would weight the rows unequally and move
// the fixed point off least squares; one rate under the largest row keeps
// it. Batch, the rate is 1/(λmax + L2), half the bound of gradient
// descent on the mean squared error. A OnePass rule's rate is 1/N.
//
// Bias-only patterns (no inputs) have R = [1]. Otherwise p must hold at
// least one pattern.
func AutoRate(p Store, opts Options) (rate float64, s Spectrum, err error) {
	if p.Inputs() > 0 && p.Len() == 0 {
		return 0, Spectrum{}, errors.New("fit: no patterns")
	}
	if err := checkStore(p, p.Len()); err != nil {
		return 0, Spectrum{}, err
	}
	if s, err = spectrum(context.Background(), p); err != nil {
		return 0, Spectrum{}, err
	}
	return s.AutoRate(opts, p.Len()), s, nil
}

// AutoRate returns the automatic rate of a run with opts on n patterns of
// spectrum s (see the function AutoRate).
func (s Spectrum) AutoRate(opts Options, n int) float64 {
	if isOnePass(opts.Rule) {
		return 1 / float64(max(n, 1))
	}
	bound, _ := s.Bound(opts)
	if opts.Batch {
		return bound / 2
	}
	return autoEta * bound / 2
}

// isOnePass reports whether rule makes a single pass (OnePass).
func isOnePass(rule Rule) bool {
	op, ok := rule.(OnePass)
	return ok && op.OnePass()
}

// spectrum returns the spectrum of the well-formed patterns p. It stops
// with an error wrapping ctx.Err() once ctx is done.
func spectrum(ctx context.Context, p Store) (Spectrum, error) {
	switch width := p.Inputs(); {
	case width == 0:
		return Spectrum{LambdaMax: 1, TraceR: 1, RowMax: 1}, nil
	case width > maxEigenWidth:
		return powerSpectrum(ctx, p)
	}
	return eigenSpectrum(ctx, p)
}

// rateStopped returns the error of an automatic rate whose context is
// done, or nil.
func rateStopped(ctx context.Context) error {
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("fit: automatic rate stopped: %w", err)
	}
	return nil
}

// eigenSpectrum forms R with rank-k updates over blocks of patterns and
// takes its largest eigenvalue with mat.EigenSym.
func eigenSpectrum(ctx context.Context, p Store) (Spectrum, error) {
	const blockRows = 256
	n, d := p.Len(), p.Inputs()+1
	r := blas64.Symmetric{Uplo: blas.Upper, N: d, Stride: d, Data: make([]float64, d*d)}
	block := blas64.General{Cols: d, Stride: d, Data: make([]float64, min(n, blockRows)*d)}
	var s Spectrum
	for start := 0; start < n; start += blockRows {
		if start%ctxRows == 0 {
			if err := rateStopped(ctx); err != nil {
				return Spectrum{}, err
			}
		}
		block.Rows = min(blockRows, n-start)
		for k := range block.Rows {
			row := block.Data[k*d : (k+1)*d]
			// A store that copies writes the pattern in place; copy is
			// then a no-op.
			copy(row, p.RowTo(row[:d-1], start+k))
			row[d-1] = 1
			s.RowMax = max(s.RowMax, dot(row, row))
		}
		blas64.Syrk(blas.Trans, 1/float64(n), block, 1, r)
	}
	for i := range d {
		s.TraceR += r.Data[i*d+i]
	}
	var eigen mat.EigenSym
	if !eigen.Factorize(mat.NewSymDense(d, r.Data), false) {
		return Spectrum{}, errors.New("fit: eigendecomposition of the input correlation matrix failed")
	}
	values := eigen.Values(nil) // ascending
	s.LambdaMax = values[d-1]
	return s, nil
}

// powerSpectrum estimates λmax by power iteration with v ← Rv computed as
// the mean of x̃(x̃·v), never forming R. The Rayleigh quotient approaches
// λmax from below.
func powerSpectrum(ctx context.Context, p Store) (Spectrum, error) {
	const (
		maxIterations = 500
		tolerance     = 1e-9
	)
	n, width := p.Len(), p.Inputs()
	buf := make([]float64, width)
	var s Spectrum
	for i := range n {
		x := p.RowTo(buf, i)
		norm := dot(x, x) + 1
		s.TraceR += norm
		s.RowMax = max(s.RowMax, norm)
	}
	s.TraceR /= float64(n)

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
			return Spectrum{}, err
		}
		clear(next)
		for i := range n {
			x := p.RowTo(buf, i)
			sum := dot(x, v[:width]) + v[width]
			axpy(sum, x, next[:width])
			next[width] += sum
		}
		scale(1/float64(n), next)
		estimate := dot(v, next)
		norm := math.Sqrt(dot(next, next))
		if norm == 0 {
			break
		}
		scale(1/norm, next)
		v, next = next, v
		done := math.Abs(estimate-s.LambdaMax) <= tolerance*estimate
		s.LambdaMax = estimate
		if done {
			break
		}
	}
	if !(s.LambdaMax > 0) || math.IsInf(s.LambdaMax, 0) {
		return Spectrum{}, errors.New("fit: power iteration on the input correlation matrix failed")
	}
	return s, nil
}
