package tabular_test

import (
	"testing"

	"deltafit/ingest/tabular"
)

// A slice of a column keeps its name, kind and label flag and shares its
// cells.
func TestColumnSlice(t *testing.T) {
	c := &tabular.Column{Name: "x", Kind: tabular.Numeric, Numbers: []float64{1, 2, 3, 4}, Missing: []bool{false, true, false, false}, LabelText: true}
	s := c.Slice(1, 3)
	if s.Name != "x" || s.Kind != tabular.Numeric || !s.LabelText || s.Len() != 2 || s.Numbers[1] != 3 || !s.IsMissing(0) || s.IsMissing(1) {
		t.Fatalf("slice %+v of %+v", s, c)
	}
	s.Numbers[0] = 9
	if c.Numbers[1] != 9 {
		t.Error("the slice does not share the column's cells")
	}
}
