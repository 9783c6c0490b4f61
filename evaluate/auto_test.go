package evaluate

import (
	"reflect"
	"testing"

	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/internal/fixture"
)

func TestAutoChoice(t *testing.T) {
	auto, err := encode.ParseNumericEncoding("auto")
	if err != nil {
		t.Fatal(err)
	}
	l := Learner{Plan: encode.Options{Numeric: auto}, Fit: fit.Options{Seed: 1}}

	t.Run("the most accurate candidate wins, ties to fewer units", func(t *testing.T) {
		// r-cran-mass crabs: species is linearly separable on the five
		// measurements (base-R glm, testdata/open/PROVENANCE.md: 1.0 out of
		// fold), so a candidate with a linear unit per column scores best.
		d := fixture.TestdataDataset(t, "open/crabs.csv", "species")
		fitted, err := l.Train(d, nil)
		if err != nil {
			t.Fatal(err)
		}
		c := fitted.Encoding
		if c == nil || len(c.Candidates) != 3 {
			t.Fatalf("choice %+v, want three scored candidates", c)
		}
		best := c.Candidates[0]
		for _, k := range c.Candidates[1:] {
			if k.Accuracy > best.Accuracy {
				best = k
			}
		}
		if c.Chosen != best.Encoding {
			t.Errorf("chose %s, but the first best is %s (%+v)", c.Chosen, best.Encoding, c.Candidates)
		}
		if c.Chosen == "thermometer:8" {
			t.Errorf("chose thermometer units on a linearly separable table: %+v", c.Candidates)
		}
		if got := fitted.Classifier.Plan.Features[1].Method; got+":8" != c.Chosen && got != c.Chosen {
			t.Errorf("the plan uses %s, the choice says %s", got, c.Chosen)
		}
		if c.TrainRows+c.CheckRows != d.Table.Rows || c.CheckRows != d.Table.Rows/autoFolds {
			t.Errorf("inner split %d + %d rows of %d", c.TrainRows, c.CheckRows, d.Table.Rows)
		}
	})

	t.Run("too few rows: the thermometer candidate, unscored", func(t *testing.T) {
		d := fixture.TestdataDataset(t, "open/crabs.csv", "species")
		rows := []int{0, 1, 2, 3, 4, 100, 101, 102, 103, 104}
		fitted, err := l.Train(d, rows)
		if err != nil {
			t.Fatal(err)
		}
		if c := fitted.Encoding; c.Chosen != "thermometer:8" || len(c.Candidates) != 0 {
			t.Errorf("choice %+v, want thermometer:8 without candidates", c)
		}
	})

	t.Run("deterministic", func(t *testing.T) {
		d := fixture.TestdataDataset(t, "open/birthwt.csv", "low")
		first, err := l.Train(d, nil)
		if err != nil {
			t.Fatal(err)
		}
		again, err := l.Train(d, nil)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(first.Encoding, again.Encoding) {
			t.Errorf("two runs chose %+v and %+v", first.Encoding, again.Encoding)
		}
	})
}
