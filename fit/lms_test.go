package fit

import (
	"fmt"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestBatchLinearDeltaReachesLeastSquares(t *testing.T) {
	rows, species := readIris(t)
	cases := []struct {
		name       string
		patterns   Patterns
		classes    []int
		numClasses int
	}{
		{"iris virginica vs rest, standardized", standardized(rows), oneVsRest(species, 2), 2},
		{"iris versicolor vs rest, min-max", minMaxed(rows), oneVsRest(species, 1), 2},
		{"iris 3 classes, standardized", standardized(rows), species, 3},
		{"iris 3 classes, min-max", minMaxed(rows), species, 3},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			result, err := Train(tc.patterns, tc.classes, tc.numClasses, Options{
				Unit: Linear, Batch: true, KeepGoing: true, Epochs: 50000, Tolerance: 1e-300,
			})
			if err != nil {
				t.Fatal(err)
			}
			want := leastSquares(t, tc.patterns, tc.classes, tc.numClasses, 1, 0)
			// Widrow & Hoff 1960; Widrow & Stearns 1985: batch LMS is gradient descent on
			// the mean squared error, whose fixed point is the least-squares solution.
			// 1e-4: the brief's bound; the iteration contracts geometrically, so enough
			// epochs reach it.
			if dev := maxDeviation(result.Network, want); dev > 1e-4 {
				t.Errorf("weights differ from least squares by %g after %d epochs (stop %s), want ≤ 1e-4",
					dev, len(result.History), result.Stop)
			}
		})
	}
}

func TestOnlineLinearDeltaNearLeastSquares(t *testing.T) {
	rows, species := readIris(t)
	patterns := standardized(rows)
	const rate = 0.001
	result, err := Train(patterns, species, 3, Options{
		Unit: Linear, Rate: rate, KeepGoing: true, Epochs: 4000, Tolerance: 1e-300, Seed: 1,
	})
	if err != nil {
		t.Fatal(err)
	}
	want := leastSquares(t, patterns, species, 3, 1, 0)
	// Widrow & Stearns 1985: with a constant rate, per-pattern LMS does not settle on the
	// least-squares weights but wanders about them, with an excess error that grows with
	// rate·tr(R). At rate 0.001 (tr(R) = 5 here) the weights stay within 0.01 of them.
	if dev := maxDeviation(result.Network, want); dev > 0.01 {
		t.Errorf("online weights differ from least squares by %g, want ≤ 0.01", dev)
	}
}

// relativeDeviation returns ‖θ − θ*‖/‖θ*‖ over every weight and bias of
// the network (θ) and of a solution laid out as leastSquares returns it
// (θ*).
func relativeDeviation(net *Network, solution [][]float64) float64 {
	var miss, size float64
	for j, row := range solution {
		got := append(slices.Clone(net.Weights[j]), net.Biases[j])
		for k, want := range row {
			miss += (got[k] - want) * (got[k] - want)
			size += want * want
		}
	}
	return math.Sqrt(miss / size)
}

// noStop leaves only the epoch limit: no stop rule ends the run early.
var noStop = []Converger{}

// Averaging the online iterates removes the noise a constant rate leaves
// in the last iterate, and with a decaying rate reaches the least-squares
// weights. Iris standardized (z-scores), three linear units with targets
// 0/1, one per class against the rest; least squares by gonum's QR.
func TestAveragedOnlineReachesLeastSquares(t *testing.T) {
	rows, species := readIris(t)
	patterns := standardized(rows)
	want := leastSquares(t, patterns, species, 3, 1, 0)
	deviation := func(opts Options) float64 {
		t.Helper()
		opts.Unit, opts.Stop = Linear, noStop
		res, err := Train(patterns, species, 3, opts)
		if err != nil {
			t.Fatal(err)
		}
		return relativeDeviation(res.Network, want)
	}
	for _, seed := range []uint64{1, 2, 3} {
		t.Run(fmt.Sprintf("seed %d", seed), func(t *testing.T) {
			// Widrow & Stearns 1985: at a constant rate the last iterate wanders about the
			// least-squares weights (misadjustment μ·tr R/(2 − μ·tr R)). Polyak & Juditsky
			// 1992: the average of the iterates does not. Measured: last iterate 0.13–0.16,
			// average 0.005 after 1000 epochs at the automatic rate; the average keeps a
			// small bias, as each epoch visits every row once rather than drawing rows
			// independently.
			last := deviation(Options{Seed: seed, Epochs: 1000, LastIterate: true})
			averaged := deviation(Options{Seed: seed, Epochs: 1000})
			if averaged > 1e-2 || last < 10*averaged {
				t.Errorf("constant rate: averaged weights %.3g from least squares (want ≤ 1e-2), last iterate %.3g (want ≥ 10×)", averaged, last)
			}
			// Polyak & Juditsky 1992; Robbins & Monro 1951: with a decreasing rate the
			// averaged iterates converge to the root, here the least-squares weights.
			// 1e-3 relative: measured 7–8e-4 at decay 0.1 after 2000 epochs.
			if decayed := deviation(Options{Seed: seed, Epochs: 2000, Decay: 0.1}); decayed > 1e-3 {
				t.Errorf("decay 0.1: averaged weights %.3g from least squares, want ≤ 1e-3", decayed)
			}
		})
	}
}

// ridge solves (XᵀX/n + λI')θ = XᵀT/n for θ = [w; b] of each unit, with
// I' the identity without the bias entry (the bias is not decayed), by
// gonum's Cholesky-free dense solve. Row k of the result holds unit k's
// weights followed by its bias, as leastSquares lays them out.
func ridge(t *testing.T, p Patterns, classes []int, numClasses int, l2 float64) [][]float64 {
	t.Helper()
	n, d := p.Len(), p.Width+1
	units := unitCount(numClasses)
	normal := mat.NewDense(d, d, nil)
	right := mat.NewDense(d, units, nil)
	for i, c := range classes {
		x := append(slices.Clone(p.Row(i)), 1)
		for a := range d {
			for b := range d {
				normal.Set(a, b, normal.At(a, b)+x[a]*x[b]/float64(n))
			}
			for j := range units {
				if c == j || (units == 1 && c == 1) {
					right.Set(a, j, right.At(a, j)+x[a]/float64(n))
				}
			}
		}
	}
	for a := range d - 1 {
		normal.Set(a, a, normal.At(a, a)+l2)
	}
	var theta mat.Dense
	if err := theta.Solve(normal, right); err != nil {
		t.Fatal(err)
	}
	solution := make([][]float64, units)
	for j := range units {
		solution[j] = mat.Col(nil, j, &theta)
	}
	return solution
}

// Weight decay (Krogh & Hertz 1992) minimizes the mean squared error plus
// λ/2·‖w‖², whose minimum solves the ridge normal equations (Hoerl &
// Kennard 1970) with the bias left out of the penalty.
func TestWeightDecayReachesRidge(t *testing.T) {
	rows, species := readIris(t)
	patterns := standardized(rows)
	const l2 = 0.05
	want := ridge(t, patterns, species, 3, l2)
	plain := leastSquares(t, patterns, species, 3, 1, 0)
	for _, tc := range []struct {
		name  string
		opts  Options
		limit float64
	}{
		// Gradient descent contracts geometrically to the minimum: 1e-9 after 20000 epochs.
		{"batch", Options{Batch: true, Epochs: 20000}, 1e-9},
		// As for least squares above: averaged, decaying rate.
		{"online averaged, decay", Options{Seed: 1, Epochs: 2000, Decay: 0.1}, 1e-3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			opts := tc.opts
			opts.Unit, opts.L2, opts.Stop = Linear, l2, noStop
			res, err := Train(patterns, species, 3, opts)
			if err != nil {
				t.Fatal(err)
			}
			if dev := relativeDeviation(res.Network, want); dev > tc.limit {
				t.Errorf("weights %.3g from the ridge solution, want ≤ %g", dev, tc.limit)
			}
			// The penalty must matter here, or the check above proves nothing.
			if dev := relativeDeviation(res.Network, plain); dev < 0.05 {
				t.Errorf("weights only %.3g from plain least squares: λ %v changes nothing", dev, l2)
			}
		})
	}
}
