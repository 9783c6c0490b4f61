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
			online, lambdaMax, traceR, err := AutoRate(tc.patterns, false)
			if err != nil {
				t.Fatal(err)
			}
			batch, _, _, err := AutoRate(tc.patterns, true)
			if err != nil {
				t.Fatal(err)
			}
			// 1e-12 relative: sums of 150 squares in a different order.
			if math.Abs(traceR-tc.wantTrace) > 1e-12*tc.wantTrace {
				t.Errorf("tr(R) = %v, want %v", traceR, tc.wantTrace)
			}
			want := svdLambdaMax(t, tc.patterns)
			// 1e-10 relative: two backward-stable factorizations of a 5×5 problem.
			if math.Abs(lambdaMax-want) > 1e-10*want {
				t.Errorf("λmax = %v, SVD gives %v", lambdaMax, want)
			}
			powerLambda, powerTrace, err := powerLambdaMax(context.Background(), tc.patterns)
			if err != nil {
				t.Fatal(err)
			}
			// 1e-6 relative: power iteration stops once its estimate changes by less than
			// 1e-9 relative; the Rayleigh quotient's error is the square of the vector's.
			if math.Abs(powerLambda-want) > 1e-6*want || math.Abs(powerTrace-traceR) > 1e-12*traceR {
				t.Errorf("power iteration λmax %v, tr %v; want %v, %v", powerLambda, powerTrace, want, traceR)
			}
			// Widrow & Stearns 1985: online 0.5/tr(R); batch 1/λmax. Both below 2/λmax.
			if online != 0.5/traceR || batch != 1/lambdaMax || online >= 2/lambdaMax {
				t.Errorf("rates online %v, batch %v with tr %v, λmax %v", online, batch, traceR, lambdaMax)
			}
		})
	}
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
			if _, _, _, err := AutoRate(tc.patterns, false); err == nil {
				t.Error("no error")
			}
		})
	}
}
