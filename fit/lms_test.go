package fit

import (
	"testing"
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
