package encode

import (
	"fmt"
	"maps"
	"math"

	"deltafit/ingest/tabular"
)

// Summary is what fitting a column's encoding needs to know of its cells on
// the training rows. Summaries of disjoint row sets merge: the summary of
// shards merged in row order equals the summary of all their rows, so a plan
// fitted from merged summaries equals the plan fitted on the whole.
type Summary struct {
	Column  string
	Kind    tabular.Kind
	Rows    int // cells summarised, missing ones included
	Missing int // missing cells
	// Values are the present values of a numeric column, in row order
	// (exact quantiles need them all).
	Values []float64
	// Moments of Values, for a mean and variance without them.
	Moments Moments
	// Counts are the present values of a categorical column and how often
	// each occurs.
	Counts map[string]int
}

// Summarize summarises col on rows (0-based; nil means all).
func Summarize(col *tabular.Column, rows []int) *Summary {
	if rows == nil {
		rows = allRows(col.Len())
	}
	s := &Summary{Column: col.Name, Kind: col.Kind, Rows: len(rows)}
	if col.Kind == tabular.Categorical {
		s.Counts = map[string]int{}
	}
	for _, r := range rows {
		switch {
		case col.IsMissing(r):
			s.Missing++
		case col.Kind == tabular.Categorical:
			s.Counts[col.Text[r]]++
		case col.Kind == tabular.Numeric:
			s.Values = append(s.Values, col.Numbers[r])
			s.Moments.Add(col.Numbers[r])
		}
	}
	return s
}

// Merge adds the summary of rows that come after s's rows. It returns an
// error if the two summarise different columns or kinds.
func (s *Summary) Merge(other *Summary) error {
	if s.Column != other.Column || s.Kind != other.Kind {
		return fmt.Errorf("encode: cannot merge the summary of %s column %q into that of %s column %q",
			other.Kind, other.Column, s.Kind, s.Column)
	}
	s.Rows += other.Rows
	s.Missing += other.Missing
	s.Values = append(s.Values, other.Values...)
	s.Moments.Merge(other.Moments)
	if other.Counts != nil {
		if s.Counts == nil {
			s.Counts = make(map[string]int, len(other.Counts))
		}
		for v, n := range other.Counts {
			s.Counts[v] += n
		}
	}
	return nil
}

// Clone returns a deep copy of s.
func (s *Summary) Clone() *Summary {
	c := *s
	c.Values = append([]float64(nil), s.Values...)
	c.Counts = maps.Clone(s.Counts)
	return &c
}

// Moments are the count, mean and sum of squared deviations of some values,
// updated one value at a time (Welford 1962) and merged pairwise (Chan,
// Golub & LeVeque 1979), so shards can be summarised apart.
type Moments struct {
	Count int
	Mean  float64
	M2    float64 // Σ (x − mean)²
}

// Add includes one value.
func (m *Moments) Add(x float64) {
	m.Count++
	delta := x - m.Mean
	m.Mean += delta / float64(m.Count)
	m.M2 += delta * (x - m.Mean)
}

// Merge includes the values other summarises.
func (m *Moments) Merge(other Moments) {
	if other.Count == 0 {
		return
	}
	if m.Count == 0 {
		*m = other
		return
	}
	n := float64(m.Count + other.Count)
	delta := other.Mean - m.Mean
	m.Mean += delta * float64(other.Count) / n
	m.M2 += other.M2 + delta*delta*float64(m.Count)*float64(other.Count)/n
	m.Count += other.Count
}

// SD is the sample standard deviation (n − 1 in the denominator); 0 for
// fewer than two values.
func (m Moments) SD() float64 {
	if m.Count < 2 {
		return 0
	}
	return math.Sqrt(m.M2 / float64(m.Count-1))
}
