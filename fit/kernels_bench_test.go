package fit

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// plainDot and plainAxpy are the textbook loops the kernels replace.
func plainDot(x, y []float64) float64 {
	var sum float64
	for i, v := range x {
		sum += v * y[i]
	}
	return sum
}

func plainAxpy(alpha float64, x, y []float64) {
	for i, v := range x {
		y[i] += alpha * v
	}
}

func randomVector(rng *rand.Rand, n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = rng.NormFloat64()
	}
	return v
}

// The kernels agree with the plain loops: exactly for axpy (the same
// operations per element), and for dot within the round-off of summing n
// terms in another order (|error| ≤ n·ε·Σ|x_i y_i|, a standard bound;
// Higham 2002, ch. 3).
func TestKernelsMatchPlainLoops(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{0, 1, 3, 4, 5, 17, 64, 513} {
		x, y := randomVector(rng, n), randomVector(rng, n)
		var abs float64
		for i := range x {
			abs += math.Abs(x[i] * y[i])
		}
		if got, want := dot(x, y), plainDot(x, y); math.Abs(got-want) > float64(n)*0x1p-52*abs {
			t.Errorf("n=%d: dot %v, plain %v", n, got, want)
		}
		sum, axpySum := append([]float64(nil), y...), append([]float64(nil), y...)
		add(x, sum)
		axpy(1, x, axpySum)
		for i := range sum {
			if math.Float64bits(sum[i]) != math.Float64bits(axpySum[i]) {
				t.Fatalf("n=%d: add differs from axpy(1) at %d: %v, %v", n, i, sum[i], axpySum[i])
			}
		}
		got, want := append([]float64(nil), y...), append([]float64(nil), y...)
		axpy(0.37, x, got)
		plainAxpy(0.37, x, want)
		for i := range got {
			if got[i] != want[i] {
				t.Fatalf("n=%d: axpy differs at %d: %v, plain %v", n, i, got[i], want[i])
			}
		}
	}
}

// shrinkAxpyAdd gives the bits of the three kernels it stands in for,
// with and without a step (a zero step skips the axpy, as addRowTo does).
func TestShrinkAxpyAddMatchesThreeKernels(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{0, 1, 5, 64, 513} {
		x := randomVector(rng, n)
		for _, step := range []float64{0, -0.0123, 0.731} {
			w, sum := randomVector(rng, n), randomVector(rng, n)
			w3, sum3 := append([]float64(nil), w...), append([]float64(nil), sum...)
			shrinkAxpyAdd(0.9993, step, x, w, sum)
			scale(0.9993, w3)
			if step != 0 {
				axpy(step, x, w3)
			}
			add(w3, sum3)
			for i := range w {
				if math.Float64bits(w[i]) != math.Float64bits(w3[i]) || math.Float64bits(sum[i]) != math.Float64bits(sum3[i]) {
					t.Fatalf("n=%d step=%v at %d: w %v sum %v, three kernels %v %v", n, step, i, w[i], sum[i], w3[i], sum3[i])
				}
			}
		}
	}
}

func BenchmarkKernels(b *testing.B) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{8, 64, 512} {
		x, y := randomVector(rng, n), randomVector(rng, n)
		var sink float64
		b.Run(fmt.Sprintf("dot/n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for range b.N {
				sink += dot(x, y)
			}
		})
		b.Run(fmt.Sprintf("plainDot/n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for range b.N {
				sink += plainDot(x, y)
			}
		})
		b.Run(fmt.Sprintf("axpy/n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for range b.N {
				axpy(1e-9, x, y)
			}
		})
		b.Run(fmt.Sprintf("plainAxpy/n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for range b.N {
				plainAxpy(1e-9, x, y)
			}
		})
		_ = sink
	}
}
