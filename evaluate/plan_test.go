package evaluate

import (
	"context"
	"reflect"
	"testing"

	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/internal/refdata"
)

// FitPlan gives the plan and the auto choice of the model RunStudy fits on
// all rows, on any number of workers.
func TestFitPlanIsTheStudyPlan(t *testing.T) {
	d, err := refdata.Iris()
	if err != nil {
		t.Fatal(err)
	}
	numeric, err := encode.ParseNumericEncoding("auto")
	if err != nil {
		t.Fatal(err)
	}
	l := Learner{Plan: encode.Options{Numeric: numeric}, Fit: fit.Options{Seed: 3}}
	s, err := RunStudy(context.Background(), d, l, StudyOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, workers := range []int{1, 2} {
		l.Fit.Workers = workers
		plan, choice, err := l.FitPlan(context.Background(), d)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(plan, s.Fitted.Classifier.Plan) || !reflect.DeepEqual(choice, s.Fitted.Encoding) {
			t.Fatalf("workers %d: FitPlan chose %+v, the study %+v", workers, choice, s.Fitted.Encoding)
		}
	}
}

// Progress counts every fold of the three methods once, up to the total,
// and the study's results do not change.
func TestStudyProgress(t *testing.T) {
	d, err := refdata.Iris()
	if err != nil {
		t.Fatal(err)
	}
	l := Learner{Plan: encode.Options{Numeric: encode.Encoding{Method: encode.ZScore}}, Fit: fit.Options{Seed: 1}}
	plain, err := RunStudy(context.Background(), d, l, StudyOptions{Folds: 5, Repeats: 2, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	var calls, last, total int
	watched, err := RunStudy(context.Background(), d, l, StudyOptions{Folds: 5, Repeats: 2, Seed: 1,
		Progress: func(done, all int) { calls++; last, total = done, all }})
	if err != nil {
		t.Fatal(err)
	}
	if calls != 30 || last != 30 || total != 30 {
		t.Fatalf("%d calls, last %d of %d; want 30 of 30 (3 methods × 2 repeats × 5 folds)", calls, last, total)
	}
	if !reflect.DeepEqual(plain.Main, watched.Main) {
		t.Fatal("watching the progress changes the results")
	}
}
