package fit

import (
	"math"
	"testing"
)

func TestXORLeastSquares(t *testing.T) {
	patterns, labels := readTruthTable(t, "xor.csv")
	// Hand algebra from the normal equations of [X, 1] against the XOR targets:
	// XᵀX = [[2,1,2],[1,2,2],[2,2,4]], Xᵀt = (1,1,2), so w = (0, 0), b = 1/2 and every
	// output is 1/2, a mean squared error of 1/4.
	want := [][]float64{{0, 0, 0.5}}
	const wantMSE = 0.25

	t.Run("gonum least squares", func(t *testing.T) {
		got := leastSquares(t, patterns, labels, 2, 1, 0)
		// 1e-12: QR on a 4×3 matrix of small integers is exact but for rounding.
		for k := range want[0] {
			if math.Abs(got[0][k]-want[0][k]) > 1e-12 {
				t.Errorf("least squares %v, want %v", got[0], want[0])
			}
		}
	})
	t.Run("batch linear delta rule", func(t *testing.T) {
		result, err := Train(patterns, labels, 2, Options{Unit: Linear, Batch: true, KeepGoing: true, Epochs: 20000, Tolerance: 1e-300})
		if err != nil {
			t.Fatal(err)
		}
		// Widrow & Hoff 1960: the batch delta rule settles on the least-squares weights.
		// 1e-6: far below any weight that would change the decision, above rounding.
		if dev := maxDeviation(result.Network, want); dev > 1e-6 {
			t.Errorf("weights %v, bias %v: want %v", result.Network.Weights, result.Network.Biases, want)
		}
		last := result.History[len(result.History)-1]
		if math.Abs(last.Loss-wantMSE) > 1e-9 { // 1e-9: the loss is quadratic in the weight error
			t.Errorf("final loss %v, want %v", last.Loss, wantMSE)
		}
	})
}

func TestXORNeverLearned(t *testing.T) {
	patterns, labels := readTruthTable(t, "xor.csv")
	for _, tc := range []struct {
		name string
		opts Options
	}{
		{"online logistic", Options{Unit: Logistic}},
		{"online linear", Options{Unit: Linear}},
		{"online logistic fast rate", Options{Unit: Logistic, Rate: 2}},
		{"batch logistic", Options{Unit: Logistic, Batch: true}},
		{"hebbian", Options{Rule: Hebbian{}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			tc.opts.Epochs, tc.opts.KeepGoing, tc.opts.Seed = 2000, true, 7
			result, err := Train(patterns, labels, 2, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			// Minsky & Papert 1969: XOR is not linearly separable, so no single layer of
			// units gets all four rows right, and at least one of them is always wrong.
			for _, stats := range result.History {
				if stats.Errors < 1 {
					t.Fatalf("epoch %d: %d errors on XOR, want at least 1 (accuracy ≤ 3/4)", stats.Epoch, stats.Errors)
				}
			}
			if result.Stop == StopZeroErrors {
				t.Errorf("stopped with %q on XOR", result.Stop)
			}
		})
	}
}

func TestANDORLearned(t *testing.T) {
	for _, file := range []string{"and.csv", "or.csv"} {
		patterns, labels := readTruthTable(t, file)
		for _, tc := range []struct {
			name string
			opts Options
		}{
			{"online logistic", Options{}},
			{"online linear", Options{Unit: Linear}},
			{"batch logistic", Options{Batch: true, Epochs: 2000}},
			{"batch linear", Options{Unit: Linear, Batch: true, Epochs: 2000}},
		} {
			t.Run(file+" "+tc.name, func(t *testing.T) {
				result, err := Train(patterns, labels, 2, tc.opts)
				if err != nil {
					t.Fatal(err)
				}
				// Minsky & Papert 1969: AND and OR are linearly separable, so the delta
				// rule finds weights that classify all four rows.
				if result.Stop != StopZeroErrors {
					t.Errorf("stop %q after %d epochs, want %q", result.Stop, len(result.History), StopZeroErrors)
				}
				for i, want := range labels {
					if got := result.Network.Classify(patterns.Row(i)); got != want {
						t.Errorf("row %v: class %d, want %d", patterns.Row(i), got, want)
					}
				}
			})
		}
	}
}

func TestIrisSetosaSeparable(t *testing.T) {
	rows, species := readIris(t)
	for _, tc := range []struct {
		name     string
		patterns Patterns
		opts     Options
	}{
		{"standardized, online logistic", standardized(rows), Options{}},
		{"min-max, online logistic", minMaxed(rows), Options{}},
		{"standardized, online linear", standardized(rows), Options{Unit: Linear}},
		{"min-max, batch logistic", minMaxed(rows), Options{Batch: true, Epochs: 5000}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			result, err := Train(tc.patterns, oneVsRest(species, 0), 2, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			// UCI iris.names: "One class is linearly separable from the other 2".
			if result.Stop != StopZeroErrors {
				last := result.History[len(result.History)-1]
				t.Errorf("stop %q with %d errors after %d epochs, want %q", result.Stop, last.Errors, last.Epoch, StopZeroErrors)
			}
		})
	}
}
