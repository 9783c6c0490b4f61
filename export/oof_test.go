package export

import (
	"bytes"
	"reflect"
	"slices"
	"testing"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/ingest"
)

// The out-of-fold file read back through ingest holds every row once per
// repeat, in the fold that held it out, and its classes tally to the pooled
// confusion table.
func TestOutOfFoldCSVRoundTrip(t *testing.T) {
	d := irisDataset(t)
	learner := evaluate.Learner{Fit: fit.Options{Seed: 2, Epochs: 20}}
	var repeats []*evaluate.CVResult
	var splits [][][]int
	for r := range 2 {
		folds, err := evaluate.Folds(d, 4, 2, uint64(r))
		if err != nil {
			t.Fatal(err)
		}
		res, err := evaluate.CrossValidate(d, folds, evaluate.LearnerMethod("delta", learner, d))
		if err != nil {
			t.Fatal(err)
		}
		for k := range res.OutOfFold {
			res.OutOfFold[k].Repeat = r
		}
		repeats, splits = append(repeats, res), append(splits, folds)
	}
	var oof []evaluate.FoldPredictions
	pooled := evaluate.NewConfusion(d.Labels)
	for _, r := range repeats {
		oof = append(oof, r.OutOfFold...)
		if err := pooled.Merge(r.Confusion); err != nil {
			t.Fatal(err)
		}
	}
	var buf bytes.Buffer
	if err := WriteOutOfFoldCSV(&buf, d, oof); err != nil {
		t.Fatal(err)
	}
	back, err := ingest.ReadTable("oof.csv", &buf, ingest.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if want := 2 * d.Table.Rows; back.Rows != want {
		t.Fatalf("%d rows read back, want %d", back.Rows, want)
	}
	tally := evaluate.NewConfusion(d.Labels)
	for i := range back.Rows {
		row := int(back.Column("row").Numbers[i]) - 1
		repeat := int(back.Column("repeat").Numbers[i]) - 1
		fold := int(back.Column("fold").Numbers[i]) - 1
		if !slices.Contains(splits[repeat][fold], row) {
			t.Fatalf("line %d: row %d is not in fold %d of repeat %d", i+2, row+1, fold+1, repeat+1)
		}
		truth := slices.Index(d.Labels, back.Column("class").Text[i])
		predicted := slices.Index(d.Labels, back.Column("predicted").Text[i])
		if truth != d.Classes[row] {
			t.Fatalf("line %d: class %q, the data say %q", i+2, back.Column("class").Text[i], d.Labels[d.Classes[row]])
		}
		tally.Add(truth, predicted)
	}
	if !reflect.DeepEqual(tally.Matrix, pooled.Matrix) {
		t.Errorf("the file tallies to %v, the pooled table is %v", tally.Matrix, pooled.Matrix)
	}
}
