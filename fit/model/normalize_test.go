package model_test

import (
	"math"
	"strings"
	"testing"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/internal/refdata"
)

// Normalized scores are the raw ones divided by their row's sum: they sum
// to 1 and decide the same class.
func TestNormalize(t *testing.T) {
	d, err := refdata.Iris()
	if err != nil {
		t.Fatal(err)
	}
	fitted, err := evaluate.Learner{Fit: fit.Options{Seed: 1}}.Train(d, nil)
	if err != nil {
		t.Fatal(err)
	}
	c := fitted.Classifier
	if !c.ScoresNonNegative() {
		t.Fatal("logistic units over three classes give scores that may be negative")
	}
	raw, _, err := c.PredictTable(d.Table)
	if err != nil {
		t.Fatal(err)
	}
	p, _, err := c.PredictTable(d.Table)
	if err != nil {
		t.Fatal(err)
	}
	if err := p.Normalize("iris.csv"); err != nil {
		t.Fatal(err)
	}
	for n := range p.Len() {
		sum, rawSum := 0.0, 0.0
		for j, s := range p.ScoresOf(n) {
			sum += s
			rawSum += raw.ScoresOf(n)[j]
		}
		if math.Abs(sum-1) > 1e-15 {
			t.Fatalf("row %d: normalized scores sum to %v", n+1, sum)
		}
		for j, s := range p.ScoresOf(n) {
			if want := raw.ScoresOf(n)[j] / rawSum; s != want {
				t.Fatalf("row %d score %d: %v, want %v", n+1, j, s, want)
			}
		}
		if fit.Decide(p.ScoresOf(n)) != raw.Predicted[n] {
			t.Fatalf("row %d: normalizing changes the class", n+1)
		}
	}
}

// Scores that are negative or sum to 0 cannot be normalized; linear units
// are not promised non-negative scores.
func TestNormalizeRefuses(t *testing.T) {
	for _, scores := range [][]float64{{0.5, -0.1}, {0, 0}} {
		p := &model.Predictions{Labels: []string{"a", "b"}, Rows: []int{0, 1}, RowNumbers: []int{4, 9}, Predicted: []int{0, 0}, Scores: append([]float64{0.2, 0.8}, scores...)}
		err := p.Normalize("new.csv")
		if err == nil || !strings.HasPrefix(err.Error(), "new.csv: row 9: ") {
			t.Fatalf("scores %v: error %v, want one naming row 9 of new.csv", scores, err)
		}
	}
	c := model.Classifier{Network: &fit.Network{Unit: fit.Linear, Weights: [][]float64{{1}, {1}, {1}}}}
	if c.ScoresNonNegative() {
		t.Fatal("linear units promise non-negative scores")
	}
	c.Network = &fit.Network{Unit: fit.Logistic, On: 1, Off: -1, Weights: [][]float64{{1}}}
	if c.ScoresNonNegative() {
		t.Fatal("one logistic unit with targets ±1 gives a score On+Off−y < 0")
	}
}
