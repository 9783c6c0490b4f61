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
