package fit

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// svdLambdaMax computes λmax of R = mean of x̃x̃ᵀ independently, as the
// squared largest singular value of [X, 1]/√n (gonum mat.SVD).
func svdLambdaMax(t *testing.T, p Patterns) float64 {
	t.Helper()
	n, d := p.Len(), p.Width+1
	design := mat.NewDense(n, d, nil)
	for i := range n {
		for k, v := range p.Row(i) {
			design.Set(i, k, v/math.Sqrt(float64(n)))
		}
		design.Set(i, d-1, 1/math.Sqrt(float64(n)))
	}
	var svd mat.SVD
	if !svd.Factorize(design, mat.SVDNone) {
		t.Fatal("SVD failed")
	}
	return svd.Values(nil)[0] * svd.Values(nil)[0]
}

func TestAutoRate(t *testing.T) {
	rows, _ := readIris(t)
	for _, tc := range []struct {
		name      string
		patterns  Patterns
		wantTrace float64
	}{
		// Hand algebra: standardized columns have mean square 1, so tr(R) = 4·1 + 1.
		{"iris standardized", standardized(rows), 5},
		// Definition: tr(R) = mean of ‖x‖² + 1, summed here straight from the values.
		{"iris raw", patternsOf(rows), meanSquare(patternsOf(rows)) + 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			online, spec, err := AutoRate(tc.patterns, Options{})
			if err != nil {
				t.Fatal(err)
			}
			// 1e-12 relative: sums of 150 squares in a different order.
			if math.Abs(spec.TraceR-tc.wantTrace) > 1e-12*tc.wantTrace {
				t.Errorf("tr(R) = %v, want %v", spec.TraceR, tc.wantTrace)
			}
			want := svdLambdaMax(t, tc.patterns)
			// 1e-10 relative: two backward-stable factorizations of a 5×5 problem.
			if math.Abs(spec.LambdaMax-want) > 1e-10*want {
				t.Errorf("λmax = %v, SVD gives %v", spec.LambdaMax, want)
			}
			// Definition: the largest ‖x̃‖² = ‖x‖² + 1 over the rows, by plain loops.
			if rowMax := maxRowNorm(tc.patterns); math.Abs(spec.RowMax-rowMax) > 1e-12*rowMax {
				t.Errorf("max ‖x̃‖² = %v, want %v", spec.RowMax, rowMax)
			}
			power, err := powerSpectrum(context.Background(), tc.patterns)
			if err != nil {
				t.Fatal(err)
			}
			// 1e-6 relative: power iteration stops once its estimate changes by less than
			// 1e-9 relative; the Rayleigh quotient's error is the square of the vector's.
			if math.Abs(power.LambdaMax-want) > 1e-6*want || math.Abs(power.TraceR-spec.TraceR) > 1e-12*spec.TraceR ||
				math.Abs(power.RowMax-spec.RowMax) > 1e-12*spec.RowMax {
				t.Errorf("power iteration spectrum %+v; want λmax %v and %+v", power, want, spec)
			}
			// Nagumo & Noda 1967: one row's update is stable for rate·‖x̃‖² < 2; the online rate
			// is half of that for the largest row. Widrow & Stearns 1985: batch 1/λmax, half of
			// 2/λmax. Hand algebra: λmax ≤ tr(R) ≤ max‖x̃‖², so the online rate is the smaller.
			batch, _, err := AutoRate(tc.patterns, Options{Batch: true})
			if err != nil {
				t.Fatal(err)
			}
			if online != 1/spec.RowMax || batch != 1/spec.LambdaMax || online > 1/spec.TraceR || spec.TraceR > spec.RowMax {
				t.Errorf("rates online %v, batch %v with %+v", online, batch, spec)
			}
			// Krogh & Hertz 1992: weight decay adds λ to the curvature of every weight, so
			// the bounds become 2/(max‖x̃‖² + λ) and 2/(λmax + λ).
			const l2 = 0.5
			decayed, _, err := AutoRate(tc.patterns, Options{L2: l2})
			if err != nil {
				t.Fatal(err)
			}
			decayedBatch, _, err := AutoRate(tc.patterns, Options{L2: l2, Batch: true})
			if err != nil {
				t.Fatal(err)
			}
			if decayed != 1/(spec.RowMax+l2) || decayedBatch != 1/(spec.LambdaMax+l2) {
				t.Errorf("rates with l2 %v: online %v, batch %v", l2, decayed, decayedBatch)
			}
			// A OnePass rule's weights are the mean update: rate 1/N, no bound.
			hebbian, _, err := AutoRate(tc.patterns, Options{Rule: Hebbian{}})
			if err != nil {
				t.Fatal(err)
			}
			if bound, name := spec.Bound(Options{Rule: Hebbian{}}); hebbian != 1.0/150 || bound != 0 || name != BoundNone {
				t.Errorf("hebbian rate %v, bound %v %s; want 1/150, 0, %s", hebbian, bound, name, BoundNone)
			}
		})
	}
}

// maxRowNorm returns the largest ‖x̃‖² = ‖x‖² + 1 of the patterns.
func maxRowNorm(p Patterns) float64 {
	var largest float64
	for i := range p.Len() {
		norm := 1.0
		for _, v := range p.Row(i) {
			norm += v * v
		}
		largest = max(largest, norm)
	}
	return largest
}

// meanSquare returns the mean over patterns of ‖x‖².
func meanSquare(p Patterns) float64 {
	var sum float64
	for _, v := range p.Values {
		sum += v * v
	}
	return sum / float64(p.Len())
}

func TestAutoRateRejects(t *testing.T) {
	for _, tc := range []struct {
		name     string
		patterns Patterns
	}{
		{"no patterns", Patterns{Width: 3}},
		{"ragged", Patterns{Width: 3, Values: []float64{1, 2}}},
		{"NaN", Patterns{Width: 1, Values: []float64{math.NaN()}}},
		{"negative width", Patterns{Width: -2}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, _, err := AutoRate(tc.patterns, Options{}); err == nil {
				t.Error("no error")
			}
		})
	}
}
