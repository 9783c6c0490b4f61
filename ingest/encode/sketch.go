package encode

import (
	"fmt"
	"math"
	"slices"
	"sort"
)

// DefaultSketchCapacity is the Capacity of the sketches NewSketch makes
// when given none: a column of up to this many present values is summarised
// exactly.
const DefaultSketchCapacity = 1 << 14

// Sketch is a bounded, mergeable summary of the values of a numeric
// column, for quantile cuts of columns too long to keep: a deterministic
// compactor in levels. Level h holds values that each stand for 2^h
// values of the column. A value first goes into level 0; when a level
// holds more than Capacity values it is compacted: sorted, and (after
// holding back its largest value when their count is odd) every second
// value is moved up a level, the even positions or the odd ones by turns
// (the first compaction of a level keeps the even ones), the rest
// dropped. So a sketch of n values holds at most Capacity+1 values in each
// of about log₂(n/Capacity)+1 levels.
//
// The error bound. Take any value x and let r be how many of the m sorted
// values compacted at level h are ≤ x. Of the kept ones, ⌈r/2⌉ or ⌊r/2⌋
// are ≤ x, each now standing for 2^(h+1) values, so the sketch's count of
// the column's values ≤ x moves by at most 2^h. Every compaction adds at
// most its 2^h to the error of any count, so the error of the sketch's
// count of values ≤ x, for every x at once, is at most
//
//	E = Σ over compactions of 2^h        (ErrorBound)
//
// and since a compaction at level h removes at least Capacity values of
// weight 2^h from that level, of the n values that ever reach it, level h
// is compacted at most n/(Capacity·2^h) times, so E ≤ H·n/Capacity for H
// levels compacted. A quantile cut read from the sketch lies between the
// order statistics whose ranks are within E of the cut's exact rank
// (RankError is E/n). Until the first compaction the sketch holds every
// value and its cuts are exactly those of the values themselves.
//
// Merging sketches of disjoint shards adds their levels and compacts any
// level over Capacity; the bound of the merged sketch is again the sum of
// 2^h over all compactions, of the shards and of the merge. Results depend
// only on the values and the order of adding and merging: nothing random.
type Sketch struct {
	// Capacity is the most values a level holds before it is compacted;
	// even, at least 2.
	Capacity int
	// Levels[h] are values that each stand for 2^h values.
	Levels [][]float64
	// Odd[h] says the next compaction of level h keeps its odd positions.
	Odd []bool
	// Count is the number of values added; Min and Max the exact extremes
	// (meaningless while Count is 0).
	Count    int
	Min, Max float64
	// ErrorBound is E, the sum of 2^h over the compactions made: no count
	// of values at or below any x read from the sketch is off by more.
	ErrorBound float64
}

// NewSketch returns an empty sketch of the given capacity per level,
// rounded up to even; 0 means DefaultSketchCapacity.
func NewSketch(capacity int) *Sketch {
	if capacity <= 0 {
		capacity = DefaultSketchCapacity
	}
	capacity = max(2, capacity+capacity%2)
	return &Sketch{Capacity: capacity, Levels: [][]float64{nil}, Odd: []bool{false}}
}

// Exact reports whether the sketch still holds every value added.
func (s *Sketch) Exact() bool { return s.ErrorBound == 0 }

// RankError is the sketch's bound on the error of a rank, as a fraction
// of the values added: ErrorBound/Count (0 when exact).
func (s *Sketch) RankError() float64 {
	if s.Count == 0 {
		return 0
	}
	return s.ErrorBound / float64(s.Count)
}

// Add includes one value, which must not be NaN.
func (s *Sketch) Add(x float64) {
	if s.Count == 0 || x < s.Min {
		s.Min = x
	}
	if s.Count == 0 || x > s.Max {
		s.Max = x
	}
	s.Count++
	s.Levels[0] = append(s.Levels[0], x)
	if len(s.Levels[0]) > s.Capacity {
		s.compactFrom(0)
	}
}

// compactFrom compacts level h and then every level above it that is over
// capacity.
func (s *Sketch) compactFrom(h int) {
	for ; h < len(s.Levels) && len(s.Levels[h]) > s.Capacity; h++ {
		if h+1 == len(s.Levels) {
			s.Levels = append(s.Levels, nil)
			s.Odd = append(s.Odd, false)
		}
		level := s.Levels[h]
		slices.Sort(level)
		var held []float64
		if len(level)%2 == 1 {
			held, level = level[len(level)-1:], level[:len(level)-1]
		}
		start := 0
		if s.Odd[h] {
			start = 1
		}
		s.Odd[h] = !s.Odd[h]
		for i := start; i < len(level); i += 2 {
			s.Levels[h+1] = append(s.Levels[h+1], level[i])
		}
		// The level's storage is reused for what it keeps.
		s.Levels[h] = append(s.Levels[h][:0], held...)
		s.ErrorBound += math.Ldexp(1, h)
	}
}

// Merge adds the values other summarises; the two must have the same
// capacity.
func (s *Sketch) Merge(other *Sketch) error {
	if s.Capacity != other.Capacity {
		return fmt.Errorf("encode: cannot merge a sketch of capacity %d into one of %d", other.Capacity, s.Capacity)
	}
	if other.Count == 0 {
		return nil
	}
	if s.Count == 0 || other.Min < s.Min {
		s.Min = other.Min
	}
	if s.Count == 0 || other.Max > s.Max {
		s.Max = other.Max
	}
	s.Count += other.Count
	s.ErrorBound += other.ErrorBound
	for h, values := range other.Levels {
		if h == len(s.Levels) {
			s.Levels = append(s.Levels, nil)
			s.Odd = append(s.Odd, false)
		}
		s.Levels[h] = append(s.Levels[h], values...)
	}
	for h := range s.Levels {
		if len(s.Levels[h]) > s.Capacity {
			s.compactFrom(h)
		}
	}
	return nil
}

// Clone returns a deep copy of s.
func (s *Sketch) Clone() *Sketch {
	c := *s
	c.Levels = make([][]float64, len(s.Levels))
	for h, values := range s.Levels {
		c.Levels[h] = slices.Clone(values)
	}
	c.Odd = slices.Clone(s.Odd)
	return &c
}

// ranks returns the sketch's values in ascending order with what they
// stand for, for quantiles. While the sketch is exact that is the sorted
// values themselves.
func (s *Sketch) ranks() ranks {
	if s.Exact() {
		return sortedValues(slices.Sorted(slices.Values(s.Levels[0])))
	}
	type item struct {
		value  float64
		weight int64
	}
	var items []item
	for h, values := range s.Levels {
		for _, v := range values {
			items = append(items, item{v, int64(1) << h})
		}
	}
	slices.SortStableFunc(items, func(a, b item) int {
		switch {
		case a.value < b.value:
			return -1
		case a.value > b.value:
			return 1
		}
		return 0
	})
	w := &weighted{values: make([]float64, len(items)), through: make([]int64, len(items)), lo: s.Min, hi: s.Max}
	var sum int64
	for i, it := range items {
		sum += it.weight
		w.values[i], w.through[i] = it.value, sum
	}
	return w
}

// ranks are values in ascending order, read by rank as if every value
// of the column were there: what quantileCuts needs.
type ranks interface {
	// len is the number of values stood for.
	len() int
	// at returns the value of rank i, 0 ≤ i < len().
	at(i int) float64
	// atOrBelow counts the values ≤ c.
	atOrBelow(c float64) int
	// min and max are the extremes.
	min() float64
	max() float64
	// belowMax is the largest value under the maximum; the values must not
	// all be equal.
	belowMax() float64
}

// sortedValues are every value, sorted.
type sortedValues []float64

func (s sortedValues) len() int                { return len(s) }
func (s sortedValues) at(i int) float64        { return s[i] }
func (s sortedValues) atOrBelow(c float64) int { return countAtOrBelow(s, c) }
func (s sortedValues) min() float64            { return s[0] }
func (s sortedValues) max() float64            { return s[len(s)-1] }
func (s sortedValues) belowMax() float64       { return belowMax(s) }

// weighted are a sketch's values, sorted, value i standing for the
// values of ranks through[i-1] to through[i]−1.
type weighted struct {
	values  []float64
	through []int64 // cumulative weights
	lo, hi  float64 // exact extremes
}

func (w *weighted) len() int {
	if len(w.through) == 0 {
		return 0
	}
	return int(w.through[len(w.through)-1])
}

func (w *weighted) at(i int) float64 {
	k := sort.Search(len(w.through), func(k int) bool { return w.through[k] > int64(i) })
	return w.values[min(k, len(w.values)-1)]
}

func (w *weighted) atOrBelow(c float64) int {
	k := sort.Search(len(w.values), func(k int) bool { return w.values[k] > c })
	if k == 0 {
		return 0
	}
	return int(w.through[k-1])
}

func (w *weighted) min() float64 { return w.lo }
func (w *weighted) max() float64 { return w.hi }

func (w *weighted) belowMax() float64 {
	k := sort.SearchFloat64s(w.values, w.hi)
	if k == 0 {
		return w.lo
	}
	return w.values[k-1]
}
