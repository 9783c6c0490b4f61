package encode

import (
	"fmt"
	"slices"

	"deltafit/ingest/tabular"
)

// Stats counts what encoding met that the plan was not fitted on.
type Stats struct {
	// Other counts, per column, values outside the plan's category list
	// (unseen, or too rare in training to get a unit), which go to the
	// "other" unit.
	Other map[string]Surprise
	// MissingNoUnit counts, per column, missing cells in a column whose
	// training rows had none (encoded with every unit of the column off).
	MissingNoUnit map[string]Surprise
}

// Surprise counts the cells of one column that met one condition.
type Surprise struct {
	Count    int
	FirstRow int // 1-based data row of the first such cell
}

func (s *Stats) add(m *map[string]Surprise, col string, row int) {
	merge(m, col, Surprise{Count: 1, FirstRow: row + 1})
}

func merge(m *map[string]Surprise, col string, s Surprise) {
	if *m == nil {
		*m = map[string]Surprise{}
	}
	old, seen := (*m)[col]
	if seen && old.FirstRow < s.FirstRow {
		s.FirstRow = old.FirstRow
	}
	s.Count += old.Count
	(*m)[col] = s
}

// Renumber maps the 1-based first rows through number, which takes a
// 0-based row of the encoded columns and returns its row number in the
// input (tabular.Table.RowNumber).
func (s *Stats) Renumber(number func(row int) int) {
	for _, m := range []map[string]Surprise{s.Other, s.MissingNoUnit} {
		for col, n := range m {
			n.FirstRow = number(n.FirstRow - 1)
			m[col] = n
		}
	}
}

// Merge adds the counts of other, as when rows are encoded in blocks.
func (s *Stats) Merge(other Stats) {
	for col, n := range other.Other {
		merge(&s.Other, col, n)
	}
	for col, n := range other.MissingNoUnit {
		merge(&s.MissingNoUnit, col, n)
	}
}

// Check applies the policy for cells the plan was not fitted on. Without
// strict it returns one warning per column and kind of cell, in a fixed
// order, each naming file, the column, the count and the first row. With
// strict the first such cell is a *tabular.DataError instead.
func (s *Stats) Check(file string, strict bool) (warnings []string, err error) {
	for _, kind := range []struct {
		cells map[string]Surprise
		warn  string
		fail  string
	}{
		{s.Other, "values the model has no unit for (unseen or rare in training), sent to the other unit",
			"the model has no unit for this value (unseen or rare in training)"},
		{s.MissingNoUnit, "missing cells, which the training data never had, encoded with every unit off",
			"the cell is missing, which the training data never was here"},
	} {
		cols := make([]string, 0, len(kind.cells))
		for c := range kind.cells {
			cols = append(cols, c)
		}
		slices.Sort(cols)
		for _, c := range cols {
			n := kind.cells[c]
			if strict {
				return nil, &tabular.DataError{File: file, Row: n.FirstRow, Name: c,
					Err: fmt.Errorf("%s; cells like it in the column: %d", kind.fail, n.Count)}
			}
			warnings = append(warnings, fmt.Sprintf("%s: column %s: %s: %d (first at row %d)", tabular.DisplayName(file), c, kind.warn, n.Count, n.FirstRow))
		}
	}
	return warnings, nil
}
