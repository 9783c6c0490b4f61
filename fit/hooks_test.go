package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strings"
	"testing"
)

// replayRecorder rebuilds the weights from the recorded updates alone, with
// plain loops, and checks every update against that replica as it comes:
// the outputs from the replica's weights, the targets from the class and
// the steps from the rule's formula (Widrow & Hoff 1960: Δw = rate·(t −
// y)·x; Hebb 1949 with bipolar targets: Δw = rate·t·x), at the epoch's
// rate rate/(1 + decay·(e − 1)) (Bottou 2012), after shrinking the
// weights by 1 − rate·l2 (Krogh & Hertz 1992). When averaging, it also
// averages its own weights after every online update over the epochs the
// package documentation names (Polyak & Juditsky 1992).
type replayRecorder struct {
	t         *testing.T
	p         Patterns
	rule      Rule
	unit      Unit
	rate      float64 // of epoch 1
	perUpdate float64 // factor of the batch steps: 1/N, else 1
	decay, l2 float64
	averaging bool
	on, off   float64
	weights   [][]float64 // replica, one row per unit, bias last
	pending   [][]float64 // deferred changes of the current epoch
	// Averaging: sums of the weights after each update, of the current
	// and the previous block of epochs, and their counts.
	sumCur, sumPrev     [][]float64
	countCur, countPrev int
	updates             int
	epochs              []EpochStats
	visited             []int // rows of the current epoch
	failures            int
}

func newReplayRecorder(t *testing.T, p Patterns, opts Options, res *Result) *replayRecorder {
	rule := opts.Rule
	if rule == nil {
		rule = Delta{}
	}
	r := &replayRecorder{t: t, p: p, rule: rule, unit: res.Network.Unit, rate: res.Rate, perUpdate: 1,
		decay: opts.Decay, l2: opts.L2, on: rule.Target(true), off: rule.Target(false)}
	if _, onePass := rule.(OnePass); onePass {
		r.decay, r.l2 = 0, 0 // a OnePass rule ignores them
	} else if opts.Batch {
		r.perUpdate = 1 / float64(p.Len())
	} else {
		r.averaging = !opts.LastIterate
	}
	for range res.Network.Biases {
		r.weights = append(r.weights, make([]float64, p.Width+1))
		r.pending = append(r.pending, make([]float64, p.Width+1))
		r.sumCur = append(r.sumCur, make([]float64, p.Width+1))
		r.sumPrev = append(r.sumPrev, make([]float64, p.Width+1))
	}
	return r
}

func (r *replayRecorder) fail(format string, args ...any) {
	if r.failures++; r.failures <= 5 {
		r.t.Errorf(format, args...)
	}
}

// epochRate is the rate of epoch e.
func (r *replayRecorder) epochRate(e int) float64 { return r.rate / (1 + r.decay*float64(e-1)) }

// shrink multiplies every weight but the biases by 1 − rate·l2.
func (r *replayRecorder) shrink(rate float64) {
	for _, w := range r.weights {
		for i := range r.p.Width {
			w[i] *= 1 - rate*r.l2
		}
	}
}

func (r *replayRecorder) RecordUpdate(u *Update) {
	r.updates++
	r.visited = append(r.visited, u.Row)
	x := r.p.Row(u.Row)
	rate := r.epochRate(u.Epoch)
	for j, w := range r.weights {
		z := w[len(x)]
		for i, v := range x {
			z += w[i] * v
		}
		y := z
		if r.unit == Logistic {
			y = 1 / (1 + math.Exp(-z))
		}
		target := r.off
		if (len(r.weights) == 1 && u.Class == 1) || (len(r.weights) > 1 && u.Class == j) {
			target = r.on
		}
		step := rate * r.perUpdate * r.rule.Signal(target, y)
		// 1e-12: the replica sums in another order than the trainer's
		// kernels; the weights here stay below 100 in magnitude.
		if u.Targets[j] != target || math.Abs(u.Outputs[j]-y) > 1e-12 || math.Abs(u.Steps[j]-step) > 1e-12 {
			r.fail("epoch %d row %d unit %d: target %v output %v step %v; replica %v %v %v",
				u.Epoch, u.Row, j, u.Targets[j], u.Outputs[j], u.Steps[j], target, y, step)
		}
	}
	if !u.Deferred && r.l2 != 0 {
		r.shrink(rate)
	}
	for j, w := range r.weights {
		change := w
		if u.Deferred {
			change = r.pending[j]
		}
		for i, v := range x {
			change[i] += u.Steps[j] * v
		}
		change[len(x)] += u.Steps[j]
	}
	if r.averaging {
		for j, w := range r.weights {
			for i, v := range w {
				r.sumCur[j][i] += v
			}
		}
		r.countCur++
	}
}

func (r *replayRecorder) RecordEpoch(stats EpochStats) error {
	r.epochs = append(r.epochs, stats)
	if len(r.visited) != r.p.Len() || !slices.Equal(slices.Sorted(slices.Values(r.visited)), identity(r.p.Len())) {
		r.fail("epoch %d recorded %d updates, not one per pattern", stats.Epoch, len(r.visited))
	}
	r.visited = r.visited[:0]
	if r.l2 != 0 && len(r.pending) > 0 && r.perUpdate != 1 {
		r.shrink(r.epochRate(stats.Epoch)) // batch: once per epoch, before the summed change
	}
	for j, change := range r.pending {
		for i, v := range change {
			r.weights[j][i] += v
		}
		clear(change)
	}
	// The blocks of epochs (2^(k−1), 2^k] of the package documentation.
	if e := stats.Epoch; r.averaging && e&(e-1) == 0 {
		r.sumPrev, r.sumCur = r.sumCur, r.sumPrev
		r.countPrev, r.countCur = r.countCur, 0
		for _, s := range r.sumCur {
			clear(s)
		}
	}
	return nil
}

// kept returns the replica's weights as Train returns them: averaged when
// averaging.
func (r *replayRecorder) kept() [][]float64 {
	if !r.averaging {
		return r.weights
	}
	out := make([][]float64, len(r.weights))
	for j := range r.weights {
		out[j] = make([]float64, len(r.weights[j]))
		for i := range out[j] {
			out[j][i] = (r.sumPrev[j][i] + r.sumCur[j][i]) / float64(r.countPrev+r.countCur)
		}
	}
	return out
}

func identity(n int) []int {
	out := make([]int, n)
	for i := range out {
		out[i] = i
	}
	return out
}

// The update recorder sees exactly the changes training makes: replaying
// them gives the trained weights, and averaging the replayed weights gives
// the averaged ones.
func TestRecorderSeesEveryUpdate(t *testing.T) {
	rows, species := readIris(t)
	p := standardized(rows)
	and, andLabels := readTruthTable(t, "and.csv")
	for _, tc := range []struct {
		name       string
		patterns   Patterns
		classes    []int
		numClasses int
		opts       Options
	}{
		{"online logistic", p, species, 3, Options{Seed: 2, Epochs: 6, KeepGoing: true}},
		{"online linear", p, species, 3, Options{Seed: 2, Unit: Linear, Epochs: 6, KeepGoing: true}},
		{"online linear, last iterate", p, species, 3, Options{Seed: 2, Unit: Linear, Epochs: 6, KeepGoing: true, LastIterate: true}},
		{"online linear, decay and l2", p, species, 3, Options{Seed: 3, Unit: Linear, Epochs: 9, KeepGoing: true, Decay: 0.5, L2: 0.3}},
		{"online one unit", and, andLabels, 2, Options{Seed: 1, Epochs: 30, KeepGoing: true}},
		{"batch linear", p, species, 3, Options{Batch: true, Unit: Linear, Epochs: 6, KeepGoing: true}},
		{"batch linear, decay and l2", p, species, 3, Options{Batch: true, Unit: Linear, Epochs: 6, KeepGoing: true, Decay: 0.2, L2: 0.1}},
		{"hebbian one pass", p, species, 3, Options{Rule: Hebbian{}, L2: 0.5}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			plain, err := Train(tc.patterns, tc.classes, tc.numClasses, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			rec := newReplayRecorder(t, tc.patterns, tc.opts, plain)
			opts := tc.opts
			opts.Recorder = rec
			res, err := Train(tc.patterns, tc.classes, tc.numClasses, opts)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(res, plain) {
				t.Error("recording changed the result")
			}
			if want := len(res.History) * tc.patterns.Len(); rec.updates != want {
				t.Errorf("%d updates recorded, want %d", rec.updates, want)
			}
			if !slices.Equal(rec.epochs, res.History) {
				t.Errorf("recorded epochs %v, history %v", rec.epochs, res.History)
			}
			for j, w := range rec.kept() {
				got := append(slices.Clone(res.Network.Weights[j]), res.Network.Biases[j])
				for i := range w {
					// 1e-9: round-off of the replica's other summation
					// order, accumulated over the epochs.
					if math.Abs(w[i]-got[i]) > 1e-9 {
						t.Fatalf("unit %d: replayed weights %v, trained %v", j, w, got)
					}
				}
			}
		})
	}
}

// epochLimit is a custom stop rule: it ends training after a set epoch.
type epochLimit int

func (l epochLimit) Converged(history []EpochStats) string {
	if len(history) >= int(l) {
		return fmt.Sprintf("limit %d", int(l))
	}
	return ""
}

// afterEpoch ends training after a set epoch with its own reason.
type afterEpoch struct {
	epoch  int
	reason string
}

func (a afterEpoch) Converged(history []EpochStats) string {
	if len(history) >= a.epoch {
		return a.reason
	}
	return ""
}

func TestStopRules(t *testing.T) {
	rows, species := readIris(t)
	p := standardized(rows)
	and, andLabels := readTruthTable(t, "and.csv")
	for _, tc := range []struct {
		name       string
		patterns   Patterns
		classes    []int
		numClasses int
		opts       Options
		same       Options // options that must give the identical result
		stop       string
		epochs     int // 0: do not check
	}{
		{"custom rule stops", p, species, 3, Options{Seed: 1, Stop: []Converger{epochLimit(3)}}, Options{Seed: 1, Epochs: 3, KeepGoing: true, Tolerance: 1e-300}, "limit 3", 3},
		{"rules asked in order", p, species, 3, Options{Seed: 1, Stop: []Converger{afterEpoch{2, "first"}, afterEpoch{2, "second"}}}, Options{Seed: 1, Epochs: 2, KeepGoing: true, Tolerance: 1e-300}, "first", 2},
		{"epochs still limit", p, species, 3, Options{Seed: 1, Epochs: 4, Stop: []Converger{epochLimit(10)}}, Options{Seed: 1, Epochs: 4, KeepGoing: true, Tolerance: 1e-300}, StopEpochs, 4},
		{"defaults spelt out", and, andLabels, 2, Options{Seed: 1, Stop: []Converger{ZeroErrors{}, Plateau{DefaultTolerance, DefaultPatience, false}}}, Options{Seed: 1}, StopZeroErrors, 0},
		{"keep going spelt out", p, species, 3, Options{Unit: Linear, Batch: true, Epochs: 5000, Stop: []Converger{Plateau{1e-6, 4, false}}}, Options{Unit: Linear, Batch: true, Epochs: 5000, KeepGoing: true, Tolerance: 1e-6, Patience: 4}, StopConverged, 0},
		{"holdout spelt out", p, species, 3, Options{Seed: 3, Unit: Linear, Holdout: 0.2, Stop: []Converger{ZeroErrors{}, Plateau{DefaultTolerance, DefaultPatience, true}}}, Options{Seed: 3, Unit: Linear, Holdout: 0.2}, StopEarly, 0},
		{"one pass before any rule", p, species, 3, Options{Rule: Hebbian{}, Stop: []Converger{epochLimit(1)}}, Options{Rule: Hebbian{}}, StopOnePass, 1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			res, err := Train(tc.patterns, tc.classes, tc.numClasses, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			if res.Stop != tc.stop || (tc.epochs > 0 && len(res.History) != tc.epochs) {
				t.Errorf("stop %q after %d epochs, want %q after %d", res.Stop, len(res.History), tc.stop, tc.epochs)
			}
			same, err := Train(tc.patterns, tc.classes, tc.numClasses, tc.same)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(res.Network, same.Network) || !slices.Equal(res.History, same.History) {
				t.Error("weights or history differ from the equivalent options")
			}
		})
	}
	t.Run("nil rule is an error", func(t *testing.T) {
		if _, err := Train(p, species, 3, Options{Stop: []Converger{nil}}); err == nil {
			t.Error("Train took a nil stop rule")
		}
	})
}

// failingRecorder ends training at a set epoch.
type failingRecorder struct{ at int }

var errEnough = errors.New("enough")

func (r failingRecorder) RecordEpoch(stats EpochStats) error {
	if stats.Epoch == r.at {
		return errEnough
	}
	return nil
}

func TestRecorderErrorStops(t *testing.T) {
	rows, species := readIris(t)
	_, err := Train(standardized(rows), species, 3, Options{Recorder: failingRecorder{at: 2}})
	if !errors.Is(err, errEnough) || err.Error() != "fit: recorder at epoch 2: enough" {
		t.Errorf("error %v, want the recorder's, at epoch 2", err)
	}
}

// The worker count changes who measures, never what: results are
// identical to the bit (the package's determinism invariant).
func TestWorkersSameBytes(t *testing.T) {
	p, classes := noisyPatterns(3*measureChunk+17, 6, 3)
	for _, batch := range []bool{false, true} {
		t.Run(modeName(batch), func(t *testing.T) {
			var first *Result
			for _, workers := range []int{1, 2, 4, 7} {
				res, err := Train(p, classes, 3, Options{Seed: 5, Epochs: 3, Batch: batch, Workers: workers})
				if err != nil {
					t.Fatal(err)
				}
				if first == nil {
					first = res
				} else if !reflect.DeepEqual(first, res) {
					t.Errorf("%d workers gave a different result from 1", workers)
				}
			}
		})
	}
	if _, err := Train(p, classes, 3, Options{Workers: -1}); err == nil {
		t.Error("Train took -1 workers")
	}
}

// cancelAt cancels its context at a set update and counts the updates
// after it.
type cancelAt struct {
	at, seen int
	cancel   context.CancelFunc
}

func (c *cancelAt) RecordEpoch(EpochStats) error { return nil }
func (c *cancelAt) RecordUpdate(*Update) {
	if c.seen++; c.seen == c.at {
		c.cancel()
	}
}

// A cancelled context stops training within ctxRows patterns, with an
// error wrapping context.Canceled.
func TestTrainCancelled(t *testing.T) {
	p, classes := noisyPatterns(3*ctxRows, 4, 2)
	for _, tc := range []struct {
		name string
		opts Options
		at   int // cancel at this update; 0: before Train
	}{
		{"before training", Options{}, 0},
		{"online, mid epoch", Options{Seed: 1, Epochs: 5}, ctxRows + 10},
		{"batch, mid epoch", Options{Batch: true, Epochs: 5}, 2*ctxRows + 1},
		{"between epochs", Options{Seed: 1, Epochs: 5}, 3 * ctxRows},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ctx, cancel := context.WithCancel(context.Background())
			defer cancel()
			rec := &cancelAt{at: tc.at, cancel: cancel}
			if tc.at == 0 {
				cancel()
			}
			opts := tc.opts
			opts.Recorder = rec
			res, err := TrainContext(ctx, p, classes, 2, opts)
			if res != nil || !errors.Is(err, context.Canceled) {
				t.Fatalf("Train = %v, %v; want no result and an error wrapping context.Canceled", res, err)
			}
			if after := rec.seen - tc.at; tc.at > 0 && after > ctxRows {
				t.Errorf("%d updates after the cancellation, want at most %d", after, ctxRows)
			}
		})
	}
}

// historyOf makes the history of a run with the given training losses,
// held-out losses equal to twice them, and the best losses as Train fills
// them in.
func historyOf(losses ...float64) []EpochStats {
	var history []EpochStats
	best := math.Inf(1)
	for e, loss := range losses {
		best = min(best, loss)
		history = append(history, EpochStats{Epoch: e + 1, Loss: loss, BestLoss: best,
			Holdout: HoldoutStats{Rows: 1, Loss: 2 * loss}, BestHoldoutLoss: 2 * best})
	}
	return history
}

// Plateau, by hand: stop after epoch e once the best loss of epochs 1..e
// is lower than the best of 1..e−P by no more than Tolerance of the latter.
func TestPlateau(t *testing.T) {
	for _, tc := range []struct {
		name    string
		rule    Plateau
		history []EpochStats
		want    string
	}{
		{"too few epochs", Plateau{0.01, 3, false}, historyOf(1, 1, 1), ""},
		{"flat for the window", Plateau{0.01, 3, false}, historyOf(1, 1, 1, 1), StopConverged},
		{"falling by more than the tolerance", Plateau{0.01, 3, false}, historyOf(1, 1, 1, 0.98), ""},
		{"falling by exactly the tolerance", Plateau{0.25, 2, false}, historyOf(1, 1, 0.75), StopConverged},
		{"falling by less than the tolerance", Plateau{0.01, 3, false}, historyOf(1, 1, 1, 0.995), StopConverged},
		// The old rule compared two consecutive losses: a noisy loss that
		// happens to repeat did stop it. The best loss over the window did fall.
		{"noise that repeats a loss", Plateau{1e-9, 3, false}, historyOf(1, 0.9, 0.95, 0.8, 0.8), ""},
		{"rises after a low, then the window passes", Plateau{0.001, 2, false}, historyOf(1, 0.5, 0.7, 0.6), StopConverged},
		{"a new low in the window", Plateau{0.001, 2, false}, historyOf(1, 0.5, 0.7, 0.4), ""},
		{"held-out loss", Plateau{0.01, 2, true}, historyOf(1, 0.5, 0.6, 0.55), StopEarly},
		{"zero loss stays zero", Plateau{1e-6, 1, false}, historyOf(0, 0), StopConverged},
		{"patience below 1 counts as 1", Plateau{0.1, 0, false}, historyOf(1, 1), StopConverged},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := tc.rule.Converged(tc.history); got != tc.want {
				t.Errorf("Converged = %q, want %q", got, tc.want)
			}
		})
	}
	if got := (Plateau{1e-6, 10, true}).String(); got != "the best held-out loss fell by at most 1e-06 of itself over 10 epochs" {
		t.Errorf("String = %q", got)
	}
}

// The held-out patterns are a fraction of each class, the same for the
// same seed, never trained on; the weights kept are those of the epoch
// with the lowest held-out loss (Prechelt 1998).
func TestHoldout(t *testing.T) {
	rows, species := readIris(t)
	p := standardized(rows)
	t.Run("split", func(t *testing.T) {
		train, held, err := holdoutSplit(species, 3, 0.2, 9)
		if err != nil {
			t.Fatal(err)
		}
		perClass := make([]int, 3)
		for _, r := range held {
			perClass[species[r]]++
		}
		// UCI iris.names: 50 rows per class; 0.2 of 50 is 10.
		if !slices.Equal(perClass, []int{10, 10, 10}) || len(train) != 120 {
			t.Errorf("held out %v per class, %d left to train on; want 10 each and 120", perClass, len(train))
		}
		all := slices.Sorted(slices.Values(append(slices.Clone(train), held...)))
		if !slices.Equal(all, identity(150)) || !slices.IsSorted(train) || !slices.IsSorted(held) {
			t.Error("the two parts are not a sorted partition of the rows")
		}
		again, _, _ := holdoutSplit(species, 3, 0.2, 9)
		other, _, _ := holdoutSplit(species, 3, 0.2, 10)
		if !slices.Equal(again, train) || slices.Equal(other, train) {
			t.Error("the split is not a function of the seed")
		}
	})
	t.Run("small classes keep a row to train on", func(t *testing.T) {
		train, held, err := holdoutSplit([]int{0, 1, 1, 1, 1}, 2, 0.6, 1)
		if err != nil {
			t.Fatal(err)
		}
		// Class 0: round(0.6) = 1, but its only row stays; class 1: round(2.4) = 2.
		if len(held) != 2 || len(train) != 3 || train[0] != 0 {
			t.Errorf("train %v, held %v", train, held)
		}
		if _, _, err := holdoutSplit([]int{0, 1, 1}, 2, 0.1, 1); err == nil || !strings.HasPrefix(err.Error(), "fit: ") {
			t.Errorf("a holdout of none: err = %v", err)
		}
	})
	t.Run("training", func(t *testing.T) {
		var seen []int
		rec := &rowRecorder{rows: &seen}
		res, err := Train(p, species, 3, Options{Seed: 4, Unit: Linear, Holdout: 0.2, Epochs: 60, KeepGoing: true, Recorder: rec})
		if err != nil {
			t.Fatal(err)
		}
		_, held, _ := holdoutSplit(species, 3, 0.2, 4)
		for _, r := range seen {
			if _, found := slices.BinarySearch(held, r); found {
				t.Fatalf("held-out row %d was trained on", r)
			}
		}
		best := 0
		for e, s := range res.History {
			if s.Holdout.Rows != 30 {
				t.Fatalf("epoch %d measured %d held-out rows, want 30", e+1, s.Holdout.Rows)
			}
			if s.Holdout.Loss < res.History[best].Holdout.Loss {
				best = e
			}
		}
		if res.Epoch != best+1 || res.HoldoutRows != 30 {
			t.Errorf("kept epoch %d of %d, holdout %d rows; the lowest held-out loss is epoch %d", res.Epoch, len(res.History), res.HoldoutRows, best+1)
		}
		// The kept network scores the held-out rows as that epoch measured them.
		var loss float64
		outputs := make([]float64, 3)
		for _, r := range held {
			res.Network.classify(p.Row(r), outputs)
			for j, y := range outputs {
				target := 0.0
				if j == species[r] {
					target = 1
				}
				loss += (target - y) * (target - y)
			}
		}
		loss /= float64(3 * len(held))
		if want := res.History[best].Holdout.Loss; math.Abs(loss-want) > 1e-12 {
			t.Errorf("kept network's held-out loss %v, epoch %d measured %v", loss, best+1, want)
		}
	})
	t.Run("rejected", func(t *testing.T) {
		for _, fraction := range []float64{-0.1, 1, math.NaN()} {
			if _, err := Train(p, species, 3, Options{Holdout: fraction}); err == nil {
				t.Errorf("holdout %v accepted", fraction)
			}
		}
	})
}

// rowRecorder notes the store row of every update.
type rowRecorder struct{ rows *[]int }

func (r *rowRecorder) RecordEpoch(EpochStats) error { return nil }
func (r *rowRecorder) RecordUpdate(u *Update)       { *r.rows = append(*r.rows, u.Row) }
