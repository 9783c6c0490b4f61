package export_test

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"

	"deltafit/export"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// FuzzReadModel feeds arbitrary bytes to ReadModel. Invariants: no panic;
// every error names the input and wraps ErrModel; a model it accepts
// writes back to a file it accepts again, and predicts on a table of its
// own columns (values low, high and missing) without a panic, with finite
// scores or a *DataError. The seed corpus in testdata/fuzz/FuzzReadModel
// holds a good model and the broken ones of testdata/bad.
func FuzzReadModel(f *testing.F) {
	f.Add([]byte(`{"schema_version": 1}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := export.ReadModel("fuzz.json", bytes.NewReader(data))
		if err != nil {
			if !errors.Is(err, export.ErrModel) && !strings.HasPrefix(err.Error(), "fuzz.json: cannot read") {
				t.Fatalf("error %q does not wrap ErrModel", err)
			}
			if !strings.HasPrefix(err.Error(), "fuzz.json: ") {
				t.Fatalf("error %q does not name the input", err)
			}
			return
		}
		var again bytes.Buffer
		if err := export.WriteModel(&again, m); err != nil {
			t.Fatalf("an accepted model does not write: %v", err)
		}
		if _, err := export.ReadModel("again.json", &again); err != nil {
			t.Fatalf("an accepted model, written again, is rejected: %v", err)
		}
		p, _, err := m.PredictTable(tableFor(m.Plan))
		if err != nil {
			var de *tabular.DataError
			if !errors.As(err, &de) {
				t.Fatalf("predict error %q (%T) is not a *DataError", err, err)
			}
			return
		}
		for i := range p.Len() {
			for _, s := range p.ScoresOf(i) {
				if math.IsNaN(s) || math.IsInf(s, 0) {
					t.Fatalf("row %d: score %v", i+1, s)
				}
			}
			if p.Predicted[i] < 0 || p.Predicted[i] >= len(m.Labels) {
				t.Fatalf("row %d: class %d of %d", i+1, p.Predicted[i], len(m.Labels))
			}
		}
	})
}

// tableFor makes three rows for the columns a plan reads: low values,
// high values and missing cells.
func tableFor(p *encode.Plan) *tabular.Table {
	t := &tabular.Table{Name: "rows", Rows: 3}
	for _, f := range p.Features {
		c := &tabular.Column{Name: f.Column, Kind: f.Kind, Missing: []bool{false, false, true}}
		if f.Kind == tabular.Categorical {
			c.Text = []string{"", "unseen", ""}
			if len(f.Categories) > 0 {
				c.Text[0] = f.Categories[0]
			}
		} else {
			c.Numbers = []float64{-1e300, 1e300, 0}
			if f.Kind == tabular.Boolean {
				c.Numbers = []float64{0, 1, 0}
			}
		}
		t.Columns = append(t.Columns, c)
	}
	return t
}
