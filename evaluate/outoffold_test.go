package evaluate

import (
	"context"
	"reflect"
	"slices"
	"sync"
	"testing"

	"deltafit/fit"
	"deltafit/ingest/encode"
)

// Every row is predicted once per repeat, in the fold that holds it out;
// the kept predictions tally to the pooled confusion table; and a method
// that only predicts gives the same result but for the kept predictions.
func TestOutOfFoldPredictions(t *testing.T) {
	d := irisDataset(t)
	l := Learner{Fit: fit.Options{Seed: 3, Epochs: 30}}
	l.Plan.Numeric = encode.Encoding{Method: "thermometer", Bins: 4}
	scoring := LearnerMethod("delta", l, d)
	predicting := Method{Name: scoring.Name, Predict: scoring.Predict}
	const repeats = 2
	var withScores, without []*CVResult
	for r := range repeats {
		folds, err := Folds(d, 5, 3, uint64(r))
		if err != nil {
			t.Fatal(err)
		}
		a, err := CrossValidate(d, folds, scoring)
		if err != nil {
			t.Fatal(err)
		}
		b, err := CrossValidate(d, folds, predicting)
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range a.OutOfFold {
			if !slices.Equal(f.Rows, folds[f.Fold]) {
				t.Fatalf("repeat %d, fold %d: predictions of rows %v, want the fold's rows", r, f.Fold, f.Rows[:3])
			}
		}
		withScores, without = append(withScores, a), append(without, b)
	}
	a, err := combine(withScores)
	if err != nil {
		t.Fatal(err)
	}
	b, err := combine(without)
	if err != nil {
		t.Fatal(err)
	}
	if b.OutOfFold != nil {
		t.Error("a method without Score kept predictions")
	}
	oof := a.OutOfFold
	a.OutOfFold = nil
	if !reflect.DeepEqual(a, b) {
		t.Fatal("keeping the predictions changed the cross-validation result")
	}

	seen := make([]int, d.Table.Rows)
	tally := NewConfusion(d.Labels)
	for k, f := range oof {
		if want := k / 5; f.Repeat != want {
			t.Errorf("entry %d is of repeat %d, want %d", k, f.Repeat, want)
		}
		for n, row := range f.Rows {
			seen[row]++
			tally.Add(d.Classes[row], f.Predicted[n])
			if got := fit.Decide(f.ScoresOf(n)); got != f.Predicted[n] {
				t.Fatalf("row %d: predicted %d, but its scores decide %d", row, f.Predicted[n], got)
			}
		}
	}
	for row, n := range seen {
		if n != repeats {
			t.Fatalf("row %d predicted %d times, want once per repeat (%d)", row, n, repeats)
		}
	}
	if !reflect.DeepEqual(tally.Matrix, a.Confusion.Matrix) {
		t.Errorf("the kept predictions tally to %v, the pooled table is %v", tally.Matrix, a.Confusion.Matrix)
	}

	a.OutOfFold = oof
	s, err := a.Scored(d)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Truth) != repeats*d.Table.Rows || len(s.Scores) != 3*len(s.Truth) {
		t.Errorf("scored %d rows, %d scores; want %d rows", len(s.Truth), len(s.Scores), repeats*d.Table.Rows)
	}
}

// epochCounter counts the epochs it is told of.
type epochCounter struct {
	mu     sync.Mutex
	epochs int
}

func (c *epochCounter) RecordEpoch(fit.EpochStats) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.epochs++
	return nil
}

// The auto encoding fits candidates before the learner's own fit; the
// learner's recorder hears only that own fit.
func TestRecorderHearsOnlyTheFitReturned(t *testing.T) {
	d := irisDataset(t)
	var counter epochCounter
	l := Learner{Fit: fit.Options{Seed: 1, Epochs: 20, Recorder: &counter}}
	l.Plan.Numeric = encode.Encoding{Method: encode.Auto, Bins: 4}
	fitted, err := l.Train(d, nil)
	if err != nil {
		t.Fatal(err)
	}
	if fitted.Encoding == nil || len(fitted.Encoding.Candidates) < 2 {
		t.Fatalf("the auto choice scored %v, want several candidates", fitted.Encoding)
	}
	if got, want := counter.epochs, len(fitted.Result.History); got != want {
		t.Errorf("the recorder heard %d epochs, the fit returned has %d", got, want)
	}

	// Encode gives the patterns Train trained on.
	plan, patterns, choice, err := l.Encode(context.Background(), d, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(plan, fitted.Classifier.Plan) || !reflect.DeepEqual(choice, fitted.Encoding) {
		t.Error("Encode fitted another plan than Train")
	}
	if patterns.Len() != d.Table.Rows || patterns.Inputs() != plan.Width() {
		t.Errorf("Encode gave %d×%d patterns, want %d×%d", patterns.Len(), patterns.Inputs(), d.Table.Rows, plan.Width())
	}
}
