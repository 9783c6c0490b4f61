package encode

import (
	"fmt"
	"maps"
	"math"
	"slices"

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
	// (exact quantiles need them all), unless Sketch summarises them.
	Values []float64
	// Sketch, when not nil, summarises the present values of a numeric
	// column in bounded memory instead of Values (see NewStreamSummary);
	// its cuts are exact until it holds more values than its capacity.
	Sketch *Sketch
	// Moments of Values, for a mean and variance without them.
	Moments Moments
	// Counts are the present values of a categorical column and how often
	// each occurs.
	Counts map[string]int
}

// Summarize summarises col on rows (0-based; nil means all).
func Summarize(col *tabular.Column, rows []int) *Summary {
	s := &Summary{Column: col.Name, Kind: col.Kind}
	s.Add(col, rows)
	return s
}

// NewStreamSummary returns an empty summary of a column of the given
// name and kind for rows added batch by batch (Add), in bounded memory: a
// numeric column's values go into a Sketch of the given capacity per level
// (0: DefaultSketchCapacity) instead of Values.
func NewStreamSummary(column string, kind tabular.Kind, capacity int) *Summary {
	s := &Summary{Column: column, Kind: kind}
	switch kind {
	case tabular.Categorical:
		s.Counts = map[string]int{}
	case tabular.Numeric:
		s.Sketch = NewSketch(capacity)
	}
	return s
}

// Add includes the given rows of col (0-based; nil means all), a batch of
// the column s summarises, as Summarize would, into its Values or its
// Sketch. It panics if col is of another kind.
func (s *Summary) Add(col *tabular.Column, rows []int) {
	if col.Kind != s.Kind {
		panic(fmt.Sprintf("encode: Summary.Add of a %s column to the summary of a %s one", col.Kind, s.Kind))
	}
	if s.Kind == tabular.Categorical && s.Counts == nil {
		s.Counts = map[string]int{}
	}
	if s.Kind == tabular.Numeric && s.Sketch == nil {
		n := len(rows)
		if rows == nil {
			n = col.Len()
		}
		s.Values = slices.Grow(s.Values, n) // room for the batch at once
	}
	add := func(r int) {
		switch {
		case col.IsMissing(r):
			s.Missing++
		case col.Kind == tabular.Categorical:
			s.Counts[col.Text[r]]++
		case col.Kind == tabular.Numeric:
			if s.Sketch != nil {
				s.Sketch.Add(col.Numbers[r])
			} else {
				s.Values = append(s.Values, col.Numbers[r])
			}
			s.Moments.Add(col.Numbers[r])
		}
	}
	if rows == nil {
		s.Rows += col.Len()
		for r := range col.Len() {
			add(r)
		}
		return
	}
	s.Rows += len(rows)
	for _, r := range rows {
		add(r)
	}
}

// RankError is the bound on the rank error of the summary's quantiles as
// a fraction of its present values: 0 unless a Sketch holding fewer than
// all of them summarises them (see Sketch).
func (s *Summary) RankError() float64 {
	if s.Sketch == nil {
		return 0
	}
	return s.Sketch.RankError()
}

// ranks returns the present numeric values for quantiles: every value
// sorted, or the sketch's.
func (s *Summary) ranks() ranks {
	if s.Sketch != nil {
		return s.Sketch.ranks()
	}
	sorted := slices.Clone(s.Values) // one allocation of the right size
	slices.Sort(sorted)
	return sortedValues(sorted)
}

// meanSD returns the mean and sample standard deviation of the present
// values. From a sketch that no longer holds them all, they come from the
// Moments (Welford's update), which round differently from the two sums
// over Values but describe the same values.
func (s *Summary) meanSD() (mean, sd float64) {
	switch {
	case s.Sketch == nil:
		return meanSD(s.Values)
	case s.Sketch.Exact():
		return meanSD(s.Sketch.Levels[0]) // still in row order
	case s.Sketch.Min == s.Sketch.Max:
		return s.Sketch.Min, 0
	}
	return s.Moments.Mean, s.Moments.SD()
}

// extremes returns the least and greatest present value, and false when
// there is none.
func (s *Summary) extremes() (lo, hi float64, ok bool) {
	if s.Sketch != nil {
		return s.Sketch.Min, s.Sketch.Max, s.Sketch.Count > 0
	}
	if len(s.Values) == 0 {
		return 0, 0, false
	}
	return slices.Min(s.Values), slices.Max(s.Values), true
}

// Merge adds the summary of rows that come after s's rows. It returns an
// error if the two summarise different columns or kinds, or one keeps its
// values and the other a sketch.
func (s *Summary) Merge(other *Summary) error {
	if s.Column != other.Column || s.Kind != other.Kind {
		return fmt.Errorf("encode: cannot merge the summary of %s column %q into that of %s column %q",
			other.Kind, other.Column, s.Kind, s.Column)
	}
	if (s.Sketch == nil) != (other.Sketch == nil) {
		return fmt.Errorf("encode: cannot merge the summaries of column %q: one keeps its values, the other a sketch", s.Column)
	}
	if s.Sketch != nil {
		if err := s.Sketch.Merge(other.Sketch); err != nil {
			return err
		}
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
	if s.Sketch != nil {
		c.Sketch = s.Sketch.Clone()
	}
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
