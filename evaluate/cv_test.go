package evaluate

import (
	"errors"
	"reflect"
	"runtime"
	"slices"
	"strings"
	"testing"

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
	folds, err := Folds(d, 5, 7)
	if err != nil {
		t.Fatal(err)
	}
	for _, numeric := range []string{"thermometer:8", "onehot:4", "threshold", "zscore", "minmax"} {
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
	folds, err := Folds(d, 10, 1)
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

// Folds run in parallel; the result must not depend on how many.
func TestCrossValidateSameResultOnAnyCoreCount(t *testing.T) {
	d := irisDataset(t)
	folds, err := Folds(d, 10, 5)
	if err != nil {
		t.Fatal(err)
	}
	m := LearnerMethod("delta", Learner{Fit: fit.Options{Seed: 9, Epochs: 30}}, d)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var first *CVResult
	for _, procs := range []int{1, 2, 8} {
		runtime.GOMAXPROCS(procs)
		got, err := CrossValidate(d, folds, m)
		if err != nil {
			t.Fatal(err)
		}
		if first == nil {
			first = got
			continue
		}
		if !reflect.DeepEqual(first, got) {
			t.Errorf("GOMAXPROCS=%d gave a different result", procs)
		}
	}
}

// A Method that breaks its contract is an error naming the method and the
// fold, not a panic inside a worker goroutine.
func TestCrossValidateBadMethod(t *testing.T) {
	d := irisDataset(t)
	folds, err := Folds(d, 5, 1)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name    string
		predict func(train, test []int) ([]int, error)
		want    error
	}{
		{"too few predictions", func(_, test []int) ([]int, error) { return make([]int, len(test)-1), nil }, ErrLengthMismatch},
		{"class out of range", func(_, test []int) ([]int, error) {
			p := make([]int, len(test))
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

func TestFoldsNamesTheShortClass(t *testing.T) {
	d := irisDataset(t)
	_, err := Folds(d, 51, 1)
	// UCI iris.names: 50 instances per class, so 51 folds cannot be stratified.
	want := `evaluate: class "setosa" has 50 rows; 51 folds need at least 51 in every class (use fewer folds)`
	if err == nil || err.Error() != want {
		t.Fatalf("error %v, want %s", err, want)
	}
}
