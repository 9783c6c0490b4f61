package evaluate

import (
	"context"
	"errors"
	"fmt"
	"reflect"
	"runtime"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
	"deltafit/internal/refdata"
)

func irisDataset(t *testing.T) *tabular.Dataset {
	t.Helper()
	d, err := refdata.Iris()
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// withHeldOutScrambled returns a copy of d whose rows in fold are replaced
// by extreme values, leaving every other row as it was.
func withHeldOutScrambled(d *tabular.Dataset, fold []int) *tabular.Dataset {
	scrambled := *d
	scrambled.Features = nil
	for _, c := range d.Features {
		copied := *c
		copied.Numbers = slices.Clone(c.Numbers)
		for _, r := range fold {
			copied.Numbers[r] = 1e6 + float64(r)
		}
		scrambled.Features = append(scrambled.Features, &copied)
	}
	return &scrambled
}

// The encoding plan and the weights of a fold depend on its training rows
// only: scrambling the held-out rows changes neither (the no-leakage
// invariant of cross-validation; common practice).
func TestTrainingFoldDoesNotSeeHeldOutRows(t *testing.T) {
	d := irisDataset(t)
	folds, err := Folds(d, 5, 7, 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, numeric := range []string{"thermometer:8", "onehot:4", "threshold", "zscore", "minmax", "hybrid:4", "auto"} {
		t.Run(numeric, func(t *testing.T) {
			enc, err := encode.ParseNumericEncoding(numeric)
			if err != nil {
				t.Fatal(err)
			}
			l := Learner{Plan: encode.Options{Numeric: enc}, Fit: fit.Options{Seed: 3, Epochs: 20}}
			train := TrainRows(folds, 2)
			clean, err := l.Train(d, train)
			if err != nil {
				t.Fatal(err)
			}
			dirty, err := l.Train(withHeldOutScrambled(d, folds[2]), train)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(clean.Classifier.Plan, dirty.Classifier.Plan) {
				t.Error("the plan changed with the held-out rows")
			}
			if !reflect.DeepEqual(clean.Result.Network, dirty.Result.Network) {
				t.Error("the weights changed with the held-out rows")
			}
			if !reflect.DeepEqual(clean.Encoding, dirty.Encoding) {
				t.Errorf("the auto choice changed with the held-out rows: %+v, then %+v", clean.Encoding, dirty.Encoding)
			}
			// And the check can fail: scrambling a training row does change the plan.
			moved, err := l.Train(withHeldOutScrambled(d, train[:1]), train)
			if err != nil {
				t.Fatal(err)
			}
			if reflect.DeepEqual(clean.Classifier.Plan, moved.Classifier.Plan) && numeric != "threshold" {
				t.Error("scrambling a training row left the plan unchanged; the test cannot see leakage")
			}
		})
	}
}

func TestCrossValidateIris(t *testing.T) {
	d := irisDataset(t)
	folds, err := Folds(d, 10, 1, 0)
	if err != nil {
		t.Fatal(err)
	}
	delta, err := CrossValidate(d, folds, LearnerMethod("delta", Learner{Fit: fit.Options{Seed: 1}}, d))
	if err != nil {
		t.Fatal(err)
	}
	// Common practice: linear baselines on Iris score about 0.95-0.98.
	if delta.Mean < 0.93 {
		t.Errorf("10-fold accuracy %.4f, want at least 0.93", delta.Mean)
	}
	// Every row is predicted exactly once: the pooled table holds the
	// 50 rows of each class (UCI iris.names: 50 instances per class).
	if got := delta.Confusion.RowTotals(); !slices.Equal(got, []int{50, 50, 50}) {
		t.Errorf("pooled row totals %v, want [50 50 50]", got)
	}
	if len(delta.FoldAccuracy) != 10 {
		t.Errorf("%d fold accuracies, want 10", len(delta.FoldAccuracy))
	}

	// With 45 training rows of each class in every fold, the majority is a
	// three-way tie broken toward the first label, so the baseline predicts
	// setosa and scores exactly 1/3 (worked by hand).
	majority, err := CrossValidate(d, folds, MajorityMethod(d))
	if err != nil {
		t.Fatal(err)
	}
	if majority.Confusion.Accuracy() != 1.0/3 {
		t.Errorf("majority accuracy %v, want 1/3", majority.Confusion.Accuracy())
	}
	if majority.Confusion.ColTotals()[0] != 150 {
		t.Errorf("majority predicted %v, want every row setosa", majority.Confusion.ColTotals())
	}
}

// Folds run in parallel; the result must depend neither on the number of
// cores nor on the worker count.
func TestCrossValidateSameResultOnAnyCoreCount(t *testing.T) {
	d := irisDataset(t)
	folds, err := Folds(d, 10, 5, 0)
	if err != nil {
		t.Fatal(err)
	}
	m := LearnerMethod("delta", Learner{Fit: fit.Options{Seed: 9, Epochs: 30}}, d)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var first *CVResult
	for _, procs := range []int{1, 2, 8} {
		for _, workers := range []int{0, 1, 3, 16} {
			runtime.GOMAXPROCS(procs)
			got, err := CrossValidateContext(context.Background(), d, folds, m, workers)
			if err != nil {
				t.Fatal(err)
			}
			if first == nil {
				first = got
				continue
			}
			if !reflect.DeepEqual(first, got) {
				t.Errorf("GOMAXPROCS=%d, %d workers gave a different result", procs, workers)
			}
		}
	}
}

// CrossValidateContext divides its workers between the folds and the work
// within each, never handing out more than it was given.
func TestCrossValidateDividesWorkers(t *testing.T) {
	d := irisDataset(t)
	for _, tc := range []struct {
		folds, workers int
		want           int // Fold.Workers of every fold
	}{
		{10, 4, 1}, // four folds at a time, one worker each
		{10, 1, 1}, // one fold at a time
		{3, 8, 2},  // three folds at a time, 8/3 rounded down each
		{5, 5, 1},  // five at a time
		{2, 16, 8}, // two folds, the rest within each
		{4, 0, max(1, runtime.GOMAXPROCS(0)/min(4, runtime.GOMAXPROCS(0)))},
	} {
		t.Run(fmt.Sprintf("%d folds, %d workers", tc.folds, tc.workers), func(t *testing.T) {
			folds, err := Folds(d, tc.folds, 1, 0)
			if err != nil {
				t.Fatal(err)
			}
			var mu sync.Mutex
			var busy, most int
			var given []int
			probe := Method{Name: "probe", Predict: func(_ context.Context, f Fold) ([]int, error) {
				mu.Lock()
				busy += f.Workers
				most = max(most, busy)
				given = append(given, f.Workers)
				mu.Unlock()
				time.Sleep(time.Millisecond) // let folds overlap
				mu.Lock()
				busy -= f.Workers
				mu.Unlock()
				return make([]int, len(f.Test)), nil
			}}
			if _, err := CrossValidateContext(context.Background(), d, folds, probe, tc.workers); err != nil {
				t.Fatal(err)
			}
			workers := tc.workers
			if workers == 0 {
				workers = runtime.GOMAXPROCS(0)
			}
			if most > workers {
				t.Errorf("%d workers busy at once, given %d", most, workers)
			}
			for _, w := range given {
				if w != tc.want {
					t.Fatalf("a fold got %d workers, want %d", w, tc.want)
				}
			}
		})
	}
}

// Once the context is cancelled no further fold starts, and the error
// says why.
func TestCrossValidateCancelled(t *testing.T) {
	d := irisDataset(t)
	folds, err := Folds(d, 10, 1, 0)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	var started atomic.Int32
	m := Method{Name: "cancelling", Predict: func(ctx context.Context, f Fold) ([]int, error) {
		if started.Add(1) == 2 {
			cancel()
		}
		return make([]int, len(f.Test)), ctx.Err()
	}}
	_, err = CrossValidateContext(ctx, d, folds, m, 1)
	if !errors.Is(err, context.Canceled) {
		t.Errorf("error %v, want one wrapping context.Canceled", err)
	}
	if n := started.Load(); n != 2 { // one worker: fold 3 is never handed out
		t.Errorf("%d folds started, want 2", n)
	}
}

// A fold trains on a view of the training rows of one store holding every
// row (fit.Subset). That must give the same network, bit for bit, as
// training on a copy of the training rows alone, and the view must read
// the same rows as the copy.
func TestLearnerTrainsOnAView(t *testing.T) {
	d := irisDataset(t)
	folds, err := Folds(d, 5, 3, 0)
	if err != nil {
		t.Fatal(err)
	}
	l := Learner{Fit: fit.Options{Seed: 4, Epochs: 25, KeepGoing: true}}
	for k := range folds {
		train := TrainRows(folds, k)
		fitted, all, err := l.train(context.Background(), d, train, 1)
		if err != nil {
			t.Fatal(err)
		}
		values, _ := fitted.Classifier.Plan.EncodeTo(nil, d.Features, train)
		copied := fit.Patterns{Width: fitted.Classifier.Plan.Width(), Values: values}
		view := fit.Subset(all, train)
		for i := range train {
			if !slices.Equal(view.RowTo(nil, i), copied.Row(i)) {
				t.Fatalf("fold %d: view row %d differs from the copied row", k+1, i)
			}
		}
		want, err := fit.Train(copied, classesOf(d, train), len(d.Labels), l.Fit)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(fitted.Result, want) {
			t.Errorf("fold %d: training on the view differs from training on the copy", k+1)
		}
	}
}

// A Method that breaks its contract is an error naming the method and the
// fold, not a panic inside a worker goroutine.
func TestCrossValidateBadMethod(t *testing.T) {
	d := irisDataset(t)
	folds, err := Folds(d, 5, 1, 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name    string
		predict func(ctx context.Context, f Fold) ([]int, error)
		want    error
	}{
		{"too few predictions", func(_ context.Context, f Fold) ([]int, error) { return make([]int, len(f.Test)-1), nil }, ErrLengthMismatch},
		{"class out of range", func(_ context.Context, f Fold) ([]int, error) {
			p := make([]int, len(f.Test))
			p[0] = len(d.Labels)
			return p, nil
		}, ErrClassOutOfRange},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := CrossValidate(d, folds, Method{Name: "broken", Predict: tc.predict})
			if !errors.Is(err, tc.want) || !strings.HasPrefix(err.Error(), "evaluate: broken, fold 1 of 5: ") {
				t.Errorf("error %v, want %v naming the method and fold 1 of 5", err, tc.want)
			}
		})
	}
}

func TestSmallClassesNamesTheClass(t *testing.T) {
	d := irisDataset(t)
	// UCI iris.names: 50 instances per class, so 51 folds leave every
	// class out of one of them.
	if _, err := Folds(d, 51, 1, 0); err != nil {
		t.Fatal(err)
	}
	small := SmallClassesOf(d, 51)
	want := `class "setosa" has 50 rows, fewer than the 51 folds: it is tested in 50 folds only, and some training folds lack it`
	if len(small) != 3 || small[0].String() != want {
		t.Fatalf("small classes %v, want three, the first %s", small, want)
	}
}

// EncodeStore packs 0/1 plans a block at a time and keeps others dense;
// either way each row reads back as EncodeTo writes it. Iris has 150
// rows, so blocks of encodeBlock rows are tested on a table cut to
// fewer rows than a block and on one stacked past several blocks.
func TestEncodeStore(t *testing.T) {
	iris := irisDataset(t)
	tall := *iris
	tall.Table = &tabular.Table{Name: "tall", Rows: 3*encodeBlock + 7}
	tall.Features = nil
	for _, c := range iris.Features {
		col := &tabular.Column{Name: c.Name, Kind: c.Kind}
		for r := range tall.Table.Rows {
			col.Numbers = append(col.Numbers, c.Numbers[r%len(c.Numbers)])
		}
		tall.Features = append(tall.Features, col)
	}
	for _, d := range []*tabular.Dataset{iris, &tall} {
		for _, tc := range []struct {
			numeric, store string
		}{
			{"thermometer:8", "*fit.BinaryPatterns"}, {"onehot:4", "*fit.BinaryPatterns"},
			{"hybrid:8", "fit.Patterns"}, {"zscore", "fit.Patterns"},
		} {
			e, err := encode.ParseNumericEncoding(tc.numeric)
			if err != nil {
				t.Fatal(err)
			}
			plan, err := encode.FitPlan(d.Features, nil, encode.Options{Numeric: e})
			if err != nil {
				t.Fatal(err)
			}
			store := EncodeStore(plan, d)
			if got := fmt.Sprintf("%T", store); got != tc.store {
				t.Errorf("%s, %d rows: %s, want %s", tc.numeric, d.Table.Rows, got, tc.store)
			}
			want, _ := plan.EncodeTo(nil, d.Features, nil)
			width := plan.Width()
			if store.Len() != d.Table.Rows || store.Inputs() != width {
				t.Fatalf("%s: store of %d×%d, want %d×%d", tc.numeric, store.Len(), store.Inputs(), d.Table.Rows, width)
			}
			row := make([]float64, width)
			for r := range store.Len() {
				if got := store.RowTo(row, r); !slices.Equal(got, want[r*width:(r+1)*width]) {
					t.Fatalf("%s, row %d: %v, EncodeTo %v", tc.numeric, r, got, want[r*width:(r+1)*width])
				}
			}
		}
	}
}
