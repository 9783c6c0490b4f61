package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"runtime"
	"slices"
	"strings"
	"testing"
)

// dataset is a real data set with its class labels.
type dataset struct {
	name       string
	patterns   Patterns
	classes    []int
	numClasses int
}

// modeName names a training mode in subtest names.
func modeName(batch bool) string {
	if batch {
		return "batch"
	}
	return "online"
}

// datasets are the real data sets the stability checks run on.
func datasets(t *testing.T) []dataset {
	rows, species := readIris(t)
	xor, xorLabels := readTruthTable(t, "xor.csv")
	and, andLabels := readTruthTable(t, "and.csv")
	or, orLabels := readTruthTable(t, "or.csv")
	return []dataset{
		{"iris raw", patternsOf(rows), species, 3},
		{"iris standardized", standardized(rows), species, 3},
		{"iris min-max setosa vs rest", minMaxed(rows), oneVsRest(species, 0), 2},
		{"xor", xor, xorLabels, 2},
		{"and", and, andLabels, 2},
		{"or", or, orLabels, 2},
	}
}

func TestRateAboveStabilityBoundDiverges(t *testing.T) {
	for _, data := range datasets(t) {
		for _, batch := range []bool{false, true} {
			t.Run(data.name+" "+modeName(batch), func(t *testing.T) {
				_, spec, err := AutoRate(data.patterns, Options{Batch: batch})
				if err != nil {
					t.Fatal(err)
				}
				// Widrow & Stearns 1985: LMS converges in the mean only for 0 < rate < 2/λmax;
				// at ten times the bound the error along the top eigenvector grows every step.
				rate := 10 * 2 / spec.LambdaMax
				var warnings []string
				result, err := Train(data.patterns, data.classes, data.numClasses,
					Options{Unit: Linear, Rate: rate, Batch: batch, KeepGoing: true, Epochs: 1000,
						Warn: func(m string) { warnings = append(warnings, m) }})
				if !errors.Is(err, ErrDiverged) {
					t.Fatalf("err = %v, want ErrDiverged", err)
				}
				if result != nil {
					t.Errorf("got a result %+v alongside ErrDiverged", result)
				}
				bound := fmt.Sprintf("2/λmax = %.4g, the bound for convergence in the mean", 2/spec.LambdaMax)
				if msg := err.Error(); !strings.HasPrefix(msg, "fit: weights diverged at epoch ") || !strings.Contains(msg, "is at or above "+bound) {
					t.Errorf("message %q lacks the epoch or the bound %q", msg, bound)
				}
				if len(warnings) != 1 || !strings.Contains(warnings[0], bound) {
					t.Errorf("warnings %q, want one naming %q", warnings, bound)
				}
			})
		}
	}
}

func TestAutomaticRateStable(t *testing.T) {
	for _, data := range datasets(t) {
		for _, opts := range []Options{
			{Unit: Linear}, {Unit: Logistic}, {Unit: Linear, Batch: true}, {Unit: Logistic, Batch: true},
			{Unit: Linear, L2: 0.1}, {Unit: Linear, LastIterate: true},
		} {
			name := fmt.Sprintf("%s %s %s l2 %v last %v", data.name, opts.Unit, modeName(opts.Batch), opts.L2, opts.LastIterate)
			t.Run(name, func(t *testing.T) {
				opts.KeepGoing, opts.Epochs = true, 300
				opts.Warn = func(m string) { t.Errorf("warning for an automatic rate: %s", m) }
				result, err := Train(data.patterns, data.classes, data.numClasses, opts)
				if err != nil {
					t.Fatalf("automatic rate failed: %v", err)
				}
				// Widrow & Stearns 1985: stable in the mean for rate < 2/(λmax + λ); Nagumo & Noda
				// 1967: every row's update stable for rate·(‖x̃‖² + λ) < 2. The automatic rate is
				// half the bound of its mode.
				bound, name := 2/(result.LambdaMax+opts.L2), BoundMean
				if !opts.Batch {
					bound, name = 2/(result.RowMax+opts.L2), BoundEveryRow
				}
				if !result.RateAuto || result.Rate != bound/2 || result.Bound != bound || result.BoundName != name {
					t.Errorf("rate %v (auto %v), bound %v %s; want %v, %v %s", result.Rate, result.RateAuto,
						result.Bound, result.BoundName, bound/2, bound, name)
				}
				if err := result.Network.Validate(); err != nil {
					t.Error(err)
				}
			})
		}
	}
}

// outlierPatterns are the one-column patterns of a row far out: 99 values
// drawn from N(0, 1) and one at 100, standardized (mean 0, mean square 1),
// with class 1 for the values above 0. The outlier's ‖x̃‖² is about 100
// while tr(R) = 2.
func outlierPatterns() (Patterns, []int) {
	rng := rand.New(rand.NewPCG(3, 4))
	values := make([]float64, 100)
	for i := range 99 {
		values[i] = rng.NormFloat64()
	}
	values[99] = 100
	var mean, square float64
	for _, v := range values {
		mean += v / 100
	}
	for _, v := range values {
		square += (v - mean) * (v - mean) / 100
	}
	classes := make([]int, 100)
	for i, v := range values {
		if v > 0 {
			classes[i] = 1
		}
		values[i] = (v - mean) / math.Sqrt(square)
	}
	return Patterns{Width: 1, Values: values}, classes
}

// One row far out must not make the automatic rate diverge: the rate is
// held under the bound of every row, not of the mean row. The rate of
// tr(R) alone, 0.5/tr(R), makes the outlier's update overshoot by a
// factor of about 25 and diverges.
func TestAutomaticRateSurvivesAnOutlier(t *testing.T) {
	p, classes := outlierPatterns()
	_, spec, err := AutoRate(p, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// Hand algebra: standardized, mean ‖x̃‖² = 1 + 1; the outlier's z is about √99.
	if math.Abs(spec.TraceR-2) > 1e-12 || spec.RowMax < 95 || spec.RowMax > 101 {
		t.Fatalf("spectrum %+v, want tr(R) 2 and max ‖x̃‖² near 100", spec)
	}
	for _, tc := range []struct {
		name    string
		opts    Options
		diverge bool
	}{
		{"automatic, averaged", Options{Unit: Linear, Seed: 1}, false},
		{"automatic, last iterate", Options{Unit: Linear, Seed: 1, LastIterate: true}, false},
		{"automatic, logistic", Options{Seed: 1}, false},
		{"automatic, 1000 epochs", Options{Unit: Linear, Seed: 2, Epochs: 1000, KeepGoing: true, Tolerance: 1e-300}, false},
		// Widrow & Stearns 1985's 0.5/tr(R), the rule of thumb this rate replaces.
		{"0.5/tr(R)", Options{Unit: Linear, Seed: 1, Rate: 0.5 / spec.TraceR}, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var warnings []string
			tc.opts.Warn = func(m string) { warnings = append(warnings, m) }
			res, err := Train(p, classes, 2, tc.opts)
			if tc.diverge {
				// λmax = 1 here, so the rate is below the mean bound 2/λmax: the bound
				// crossed, and named, is the every-row one.
				const bound = "2/max‖x̃‖² = "
				if !errors.Is(err, ErrDiverged) || !strings.Contains(err.Error(), "is at or above "+bound) {
					t.Errorf("err = %v, want ErrDiverged naming the every-row bound", err)
				}
				if len(warnings) != 1 || !strings.Contains(warnings[0], bound) || !strings.Contains(warnings[0], "the bound for a stable update on every row") {
					t.Errorf("warnings %q, want one naming the every-row bound", warnings)
				}
				return
			}
			if len(warnings) != 0 {
				t.Errorf("warnings %q for the automatic rate", warnings)
			}
			if err != nil {
				t.Fatal(err)
			}
			if res.Rate*res.RowMax > 1 || res.BoundName != BoundEveryRow {
				t.Errorf("rate %v · max ‖x̃‖² %v > 1, or bound %s", res.Rate, res.RowMax, res.BoundName)
			}
		})
	}
}

func TestDeterminism(t *testing.T) {
	rows, species := readIris(t)
	patterns := standardized(rows)
	values, labels := slices.Clone(patterns.Values), slices.Clone(species)
	train := func(seed uint64, batch bool) *Result {
		t.Helper()
		result, err := Train(patterns, species, 3, Options{Seed: seed, Batch: batch, Epochs: 30, KeepGoing: true})
		if err != nil {
			t.Fatal(err)
		}
		return result
	}
	sameWeights := func(a, b *Network) bool {
		return slices.EqualFunc(a.Weights, b.Weights, slices.Equal) && slices.Equal(a.Biases, b.Biases)
	}
	t.Run("same seed, identical weights and history", func(t *testing.T) {
		a, b := train(42, false), train(42, false)
		if !sameWeights(a.Network, b.Network) || !slices.Equal(a.History, b.History) { // == on every float
			t.Error("two runs with seed 42 differ")
		}
	})
	t.Run("different seed, different online order", func(t *testing.T) {
		// Per-pattern updates depend on the order, so another shuffle must change the weights.
		if sameWeights(train(1, false).Network, train(2, false).Network) {
			t.Error("seeds 1 and 2 gave identical online weights")
		}
	})
	t.Run("batch ignores the seed", func(t *testing.T) {
		// The batch update is a sum in pattern order: the seed must not enter.
		if !sameWeights(train(1, true).Network, train(2, true).Network) {
			t.Error("seeds 1 and 2 gave different batch weights")
		}
	})
	t.Run("epochs visit in different orders", func(t *testing.T) {
		tr, err := newTrainer(context.Background(), patterns, labelsOf(species), 3, Options{Seed: 5})
		if err != nil {
			t.Fatal(err)
		}
		order := func(epoch int) []int {
			tr.pcg.Seed(tr.opts.Seed, uint64(epoch))
			tr.shuffle(0, len(species))
			return slices.Clone(tr.order)
		}
		first := order(1)
		second := order(2)
		tr.order = order(1)
		if slices.Equal(first, second) || !slices.Equal(first, tr.order) {
			t.Errorf("orders of epoch 1 and 2 equal, or epoch 1 not reproduced")
		}
		sorted := slices.Sorted(slices.Values(first))
		for i, v := range sorted {
			if v != i {
				t.Fatalf("order %v is not a permutation", first)
			}
		}
	})
	t.Run("inputs not modified", func(t *testing.T) {
		if !slices.Equal(values, patterns.Values) || !slices.Equal(labels, species) {
			t.Error("Train modified its inputs")
		}
	})
}

func TestHebbianOneEpoch(t *testing.T) {
	rows, species := readIris(t)
	and, andLabels := readTruthTable(t, "and.csv")
	for _, tc := range []struct {
		name       string
		patterns   Patterns
		classes    []int
		numClasses int
		rate       float64
	}{
		{"iris standardized, 3 units", standardized(rows), species, 3, 0.01},
		{"iris raw, 3 units, automatic rate", patternsOf(rows), species, 3, 0},
		{"AND, one unit", and, andLabels, 2, 0.25},
	} {
		t.Run(tc.name, func(t *testing.T) {
			result, err := Train(tc.patterns, tc.classes, tc.numClasses, Options{Rule: Hebbian{}, Rate: tc.rate, Epochs: 1, Seed: 3})
			if err != nil {
				t.Fatal(err)
			}
			net := result.Network
			if net.Unit != Linear || net.On != 1 || net.Off != -1 || net.Rule != "hebbian" {
				t.Errorf("network unit %v, targets %v/%v, rule %q: want linear, 1/−1, hebbian", net.Unit, net.On, net.Off, net.Rule)
			}
			// Hebb 1949 outer-product rule, by hand: after one epoch from zero weights,
			// w_j = rate·Σ_p t_jp x_p and b_j = rate·Σ_p t_jp with t = ±1.
			units := unitCount(tc.numClasses)
			for j := range units {
				want := make([]float64, tc.patterns.Width+1)
				for i, c := range tc.classes {
					member := c == j
					if units == 1 {
						member = c == 1 // the one unit fires for class 1
					}
					target := -1.0
					if member {
						target = 1
					}
					for k, x := range tc.patterns.Row(i) {
						want[k] += result.Rate * target * x
					}
					want[tc.patterns.Width] += result.Rate * target
				}
				got := append(slices.Clone(net.Weights[j]), net.Biases[j])
				for k := range want {
					// 1e-12: the sums are the same but added in the shuffled order.
					if math.Abs(got[k]-want[k]) > 1e-12*math.Max(1, math.Abs(want[k])) {
						t.Errorf("unit %d: weights %v, want %v", j, got, want)
						break
					}
				}
			}
		})
	}
}

func TestBiasOnly(t *testing.T) {
	classes := []int{0, 1, 1}
	for _, p := range []Patterns{{Width: 0}, {Width: 0, Rows: 3}} {
		result, err := Train(p, classes, 2, Options{Unit: Linear, Batch: true, KeepGoing: true, Epochs: 500, Tolerance: 1e-300})
		if err != nil {
			t.Fatal(err)
		}
		net := result.Network
		// Hand algebra: least squares of a constant against targets (0, 1, 1) is their mean 2/3.
		if math.Abs(net.Biases[0]-2.0/3) > 1e-12 || len(net.Weights[0]) != 0 {
			t.Errorf("bias %v, weights %v: want 2/3 and none", net.Biases[0], net.Weights[0])
		}
		if got := net.Classify(nil); got != 1 { // 2/3 > 1/2
			t.Errorf("Classify = %d, want 1", got)
		}
		if result.LambdaMax != 1 || result.TraceR != 1 { // R = [1] by definition of x̃ = [1]
			t.Errorf("λmax %v, tr %v, want 1, 1", result.LambdaMax, result.TraceR)
		}
	}
}

func TestTrainRejects(t *testing.T) {
	good := Patterns{Width: 2, Values: []float64{0, 0, 0, 1, 1, 0, 1, 1}}
	labels := []int{0, 0, 0, 1}
	for _, tc := range []struct {
		name       string
		patterns   Patterns
		classes    []int
		numClasses int
		opts       Options
	}{
		{"one class", good, labels, 1, Options{}},
		{"class out of range", good, []int{0, 0, 2, 1}, 2, Options{}},
		{"negative class", good, []int{0, -1, 0, 1}, 2, Options{}},
		{"too few labels", good, labels[:3], 2, Options{}},
		{"no patterns", Patterns{Width: 2}, nil, 2, Options{}},
		{"ragged values", Patterns{Width: 3, Values: good.Values}, labels, 2, Options{}},
		{"negative width", Patterns{Width: -1}, labels, 2, Options{}},
		{"width 0 with values", Patterns{Width: 0, Values: []float64{1}}, labels, 2, Options{}},
		{"width 0 rows mismatch", Patterns{Width: 0, Rows: 2}, labels, 2, Options{}},
		{"NaN input", Patterns{Width: 2, Values: []float64{0, 0, 0, math.NaN(), 1, 0, 1, 1}}, labels, 2, Options{}},
		{"infinite input", Patterns{Width: 2, Values: []float64{0, 0, 0, 1, math.Inf(1), 0, 1, 1}}, labels, 2, Options{}},
		{"negative rate", good, labels, 2, Options{Rate: -0.1}},
		{"NaN rate", good, labels, 2, Options{Rate: math.NaN()}},
		{"negative epochs", good, labels, 2, Options{Epochs: -1}},
		{"negative tolerance", good, labels, 2, Options{Tolerance: -1}},
		{"unknown unit", good, labels, 2, Options{Unit: Unit(9)}},
		{"rule with targets upside down", good, labels, 2, Options{Rule: invertedRule{}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			result, err := Train(tc.patterns, tc.classes, tc.numClasses, tc.opts)
			if err == nil || result != nil {
				t.Fatalf("Train = %v, %v; want an error and no result", result, err)
			}
			if !strings.HasPrefix(err.Error(), "fit: ") {
				t.Errorf("error %q does not start with the package name", err)
			}
		})
	}
}

// invertedRule gives non-members the higher target, which no decision here can use.
type invertedRule struct{ Delta }

func (invertedRule) Target(member bool) float64 { return Delta{}.Target(!member) }

func TestStopReasons(t *testing.T) {
	and, andLabels := readTruthTable(t, "and.csv")
	xor, xorLabels := readTruthTable(t, "xor.csv")
	for _, tc := range []struct {
		name     string
		patterns Patterns
		labels   []int
		opts     Options
		want     string
	}{
		{"AND learned", and, andLabels, Options{}, StopZeroErrors},
		{"AND, keep going to the epoch limit", and, andLabels, Options{KeepGoing: true, Epochs: 5, Tolerance: 1e-300}, StopEpochs},
		{"XOR batch linear settles", xor, xorLabels, Options{Unit: Linear, Batch: true, Epochs: 100000}, StopConverged},
	} {
		t.Run(tc.name, func(t *testing.T) {
			result, err := Train(tc.patterns, tc.labels, 2, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			if result.Stop != tc.want {
				t.Errorf("stop %q, want %q", result.Stop, tc.want)
			}
			if n := len(result.History); n == 0 || result.History[n-1].Epoch != n {
				t.Errorf("history of %d epochs misnumbered", n)
			}
		})
	}
}

// nopRecorder records every update and does nothing with it.
type nopRecorder struct{}

func (nopRecorder) RecordEpoch(EpochStats) error { return nil }
func (nopRecorder) RecordUpdate(*Update)         {}

func TestEpochAllocatesNothing(t *testing.T) {
	rows, species := readIris(t)
	patterns := standardized(rows)
	for _, tc := range []struct {
		batch    bool
		recorder Recorder
	}{{false, nil}, {true, nil}, {false, nopRecorder{}}, {true, nopRecorder{}}} {
		batch := tc.batch
		tr, err := newTrainer(context.Background(), patterns, labelsOf(species), 3, Options{Batch: batch, Recorder: tc.recorder})
		if err != nil {
			t.Fatal(err)
		}
		epoch := 0
		allocs := testing.AllocsPerRun(20, func() {
			epoch++
			if _, err := tr.epoch(context.Background(), epoch); err != nil {
				t.Fatal(err)
			}
		})
		if allocs != 0 { // the package's invariant: buffers are made once per Train
			t.Errorf("batch %v, recorder %T: %v allocations per epoch, want 0", batch, tc.recorder, allocs)
		}
	}
}

// Epochs of more than one measurement chunk are measured in parallel; the
// history and weights must not depend on the number of cores (the
// package's determinism invariant). The patterns are random: the property
// holds for any data.
func TestTrainSameOnAnyCoreCount(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	n, width := 3*measureChunk+17, 6
	p := Patterns{Width: width, Values: make([]float64, n*width)}
	classes := make([]int, n)
	for i := range classes {
		for j := range width {
			p.Values[i*width+j] = rng.Float64()
		}
		classes[i] = rng.IntN(3)
	}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var first *Result
	for _, procs := range []int{1, 2, 8} {
		runtime.GOMAXPROCS(procs)
		res, err := Train(p, classes, 3, Options{Seed: 5, Epochs: 3})
		if err != nil {
			t.Fatal(err)
		}
		if first == nil {
			first = res
			continue
		}
		if !reflect.DeepEqual(first, res) {
			t.Errorf("GOMAXPROCS=%d gave a different result", procs)
		}
	}
	// The chunked loss equals the loss summed row by row, up to the
	// round-off of adding in another order (common practice).
	var loss float64
	outputs := make([]float64, 3)
	for i, c := range classes {
		first.Network.classify(p.Row(i), outputs)
		for j, y := range outputs {
			target := first.Network.Off
			if j == c {
				target = first.Network.On
			}
			loss += (target - y) * (target - y)
		}
	}
	loss /= float64(3 * n)
	if got := first.History[len(first.History)-1].Loss; math.Abs(got-loss) > 1e-12 {
		t.Errorf("chunked loss %v, row-by-row %v", got, loss)
	}
}

// The Hebbian rule's decisions do not depend on the rate: its weights are
// the rate times the summed updates (Hebb 1949; scaling every output by a
// positive constant keeps the arg max), and one pass is all it makes.
func TestHebbianDecisionsIgnoreTheRate(t *testing.T) {
	rows, species := readIris(t)
	xor, xorLabels := readTruthTable(t, "xor.csv")
	for _, tc := range []struct {
		name       string
		patterns   Patterns
		classes    []int
		numClasses int
	}{
		{"iris raw", patternsOf(rows), species, 3},
		{"XOR", xor, xorLabels, 2},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var first []int
			for _, rate := range []float64{0, 1e-3, 0.37, 50} {
				res, err := Train(tc.patterns, tc.classes, tc.numClasses, Options{Rule: Hebbian{}, Rate: rate, Epochs: 200})
				if err != nil {
					t.Fatal(err)
				}
				if len(res.History) != 1 || res.Stop != StopOnePass {
					t.Fatalf("rate %v: %d epochs, stop %q; want one pass", rate, len(res.History), res.Stop)
				}
				got := make([]int, len(tc.classes))
				for i := range got {
					got[i] = res.Network.Classify(tc.patterns.Row(i))
				}
				if first == nil {
					first = got
				} else if !slices.Equal(first, got) {
					t.Errorf("rate %v changed the decisions", rate)
				}
			}
		})
	}
}

// labelsOf wraps class labels for newTrainer.
func labelsOf(classes []int) labels { return labels{ints: classes} }
