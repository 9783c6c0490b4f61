package model_test

import (
	"errors"
	"math"
	"testing"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/ingest/tabular"
	"deltafit/internal/refdata"
)

func irisClassifier(t *testing.T) (*model.Classifier, *tabular.Dataset) {
	t.Helper()
	d, err := refdata.Iris()
	if err != nil {
		t.Fatal(err)
	}
	fitted, err := evaluate.Learner{Fit: fit.Options{Seed: 1}}.Train(d, nil)
	if err != nil {
		t.Fatal(err)
	}
	return fitted.Classifier, d
}

// Predict scores each row exactly as the network scores its pattern, and
// picks the class fit.Decide picks, whatever the rows and their order.
func TestPredictMatchesNetwork(t *testing.T) {
	c, d := irisClassifier(t)
	rows := []int{149, 0, 75, 75, 10}
	p, stats, err := c.Predict(d.Table.Name, d.Features, rows)
	if err != nil {
		t.Fatal(err)
	}
	if len(stats.Other)+len(stats.MissingNoUnit) != 0 {
		t.Fatalf("training rows met cells the plan does not know: %+v", stats)
	}
	values, _ := c.Plan.EncodeTo(nil, d.Features, rows)
	width := c.Plan.Width()
	for n, r := range rows {
		want := c.Network.ScoresTo(nil, values[n*width:(n+1)*width])
		got := p.ScoresOf(n)
		for j := range want {
			if got[j] != want[j] { // the same arithmetic: exactly equal
				t.Errorf("row %d class %d: score %v, want %v", r+1, j, got[j], want[j])
			}
		}
		if p.Rows[n] != r || p.Predicted[n] != fit.Decide(want) {
			t.Errorf("row %d: predicted %d at %d, want %d", r+1, p.Predicted[n], p.Rows[n], fit.Decide(want))
		}
	}
}

// A row whose scores overflow is an error naming the row, never a NaN or
// infinite score.
func TestPredictRefusesNonFiniteScores(t *testing.T) {
	c, d := irisClassifier(t)
	huge := *c.Network
	huge.Weights = make([][]float64, len(c.Network.Weights))
	for j, w := range c.Network.Weights {
		huge.Weights[j] = make([]float64, len(w))
		for i := range w {
			huge.Weights[j][i] = math.MaxFloat64
		}
	}
	huge.Unit = fit.Linear
	broken := *c
	broken.Network = &huge
	_, _, err := broken.PredictTable(d.Table)
	var de *tabular.DataError
	if !errors.As(err, &de) || de.Row < 1 {
		t.Fatalf("error %v, want a *tabular.DataError naming a row", err)
	}
}

// Decide takes the arg max, ties going to the lowest class index.
func TestDecideTies(t *testing.T) {
	for _, tc := range []struct {
		scores []float64
		want   int
	}{
		{[]float64{0.2, 0.7, 0.1}, 1},
		{[]float64{0.5, 0.5}, 0},      // a tie goes to the lowest class index
		{[]float64{0.1, 0.4, 0.4}, 1}, // likewise among later classes
		{[]float64{3}, 0},
	} {
		if got := fit.Decide(tc.scores); got != tc.want {
			t.Errorf("Decide(%v) = %d, want %d", tc.scores, got, tc.want)
		}
	}
}
