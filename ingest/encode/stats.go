package encode

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

// Merge adds the counts of other, as when rows are encoded in blocks.
func (s *Stats) Merge(other Stats) {
	for col, n := range other.Other {
		merge(&s.Other, col, n)
	}
	for col, n := range other.MissingNoUnit {
		merge(&s.MissingNoUnit, col, n)
	}
}
