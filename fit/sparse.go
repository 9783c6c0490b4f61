package fit

import (
	"math"
	"slices"
)

// SparsePatterns is a Store of patterns with few inputs other than 0, and
// many of those 1, as the hybrid encoding makes them (a linear unit and
// its thermometer units per column): each row keeps the indices of its
// inputs that are not +0, in BinaryPatterns' groups, and the value of each
// that is not 1. A hybrid:8 row of 8 columns holds about 36 such inputs of
// 72, 28 of them 1: some 140 bytes where the dense row takes 576.
//
// Its RowKernels give results identical to the bit to dot and axpy on the
// dense row, for the reasons BinaryPatterns gives, and because an input v
// other than 0 and 1 is added as w_k·v to the same partial sum in the same
// order (a −0 input is kept as a value, so RowTo gives every bit back).
type SparsePatterns struct {
	width  int
	rows   []sparseRow
	active []uint16  // each row's inputs, grouped as BinaryPatterns groups them; valued marks those with a value
	values []float64 // the values of the inputs marked valued, row by row, in the order of active
	tail   int
}

// sparseRow locates a row's inputs, as binaryRow does, and its values.
type sparseRow struct {
	start, vstart int
	ends          [4]uint16
}

const (
	valued         = 1 << 15 // marks an input of active whose value is not 1
	maxSparseWidth = valued - 1
)

// NewSparsePatterns returns empty SparsePatterns of width inputs with room
// for rows patterns, for Append to fill, and true; for a width outside 1
// to 32767 it returns nil and false.
func NewSparsePatterns(width, rows int) (*SparsePatterns, bool) {
	if width <= 0 || width > maxSparseWidth {
		return nil, false
	}
	return &SparsePatterns{width: width, rows: make([]sparseRow, 0, max(rows, 0)), tail: width &^ 3}, true
}

// Append adds the patterns of p, as wide as s's, after s's and returns
// true when every value of p is finite; otherwise it adds none of them and
// returns false.
func (s *SparsePatterns) Append(p Patterns) bool {
	if p.Width != s.width || len(p.Values)%p.Width != 0 {
		return false
	}
	nonzero, other := 0, 0
	for _, v := range p.Values {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
		if v != 0 || math.Signbit(v) {
			nonzero++
			if v != 1 {
				other++
			}
		}
	}
	s.active = slices.Grow(s.active, reserve(nonzero, len(s.rows), p.Len(), cap(s.rows)))
	s.values = slices.Grow(s.values, reserve(other, len(s.rows), p.Len(), cap(s.rows)))
	for i := range p.Len() {
		s.appendRow(p.Row(i))
	}
	return true
}

// appendRow adds the dense pattern x.
func (s *SparsePatterns) appendRow(x []float64) {
	r := sparseRow{start: len(s.active), vstart: len(s.values)}
	add := func(k int) {
		switch v := x[k]; {
		case v == 1:
			s.active = append(s.active, uint16(k))
		case v != 0 || math.Signbit(v):
			s.active = append(s.active, uint16(k)|valued)
			s.values = append(s.values, v)
		}
	}
	for g := range 4 {
		for k := g; k < s.tail; k += 4 {
			add(k)
		}
		if g == 0 {
			for k := s.tail; k < s.width; k++ {
				add(k)
			}
		}
		r.ends[g] = uint16(len(s.active) - r.start)
	}
	s.rows = append(s.rows, r)
}

// Len returns the number of patterns.
func (s *SparsePatterns) Len() int { return len(s.rows) }

// Inputs returns the number of inputs of each pattern.
func (s *SparsePatterns) Inputs() int { return s.width }

// entries returns row i's inputs and the values of those marked valued.
func (s *SparsePatterns) entries(i int) (r sparseRow, active []uint16, values []float64) {
	r = s.rows[i]
	end := len(s.values)
	if i+1 < len(s.rows) {
		end = s.rows[i+1].vstart
	}
	return r, s.active[r.start : r.start+int(r.ends[3])], s.values[r.vstart:end]
}

// RowTo writes pattern i into dst (made when nil) and returns it. It
// panics if i is out of range or dst is neither nil nor Inputs() long.
func (s *SparsePatterns) RowTo(dst []float64, i int) []float64 {
	dst = rowBuffer(dst, s.width, "SparsePatterns")
	_, active, values := s.entries(i)
	for _, k := range active {
		if k&valued != 0 {
			dst[k&^valued], values = values[0], values[1:]
		} else {
			dst[k] = 1
		}
	}
	return dst
}

// DotRow returns w · x_i, summed as dot sums it (see SparsePatterns).
func (s *SparsePatterns) DotRow(i int, w []float64) float64 {
	if len(w) != s.width {
		panic("fit: SparsePatterns.DotRow of a slice of the wrong length")
	}
	r, active, values := s.entries(i)
	var sums [4]float64
	from := 0
	for g, end := range r.ends {
		sum := sums[g]
		for _, k := range active[from:end] {
			if k&valued != 0 {
				sum += w[k&^valued] * values[0]
				values = values[1:]
			} else {
				sum += w[k]
			}
		}
		sums[g], from = sum, int(end)
	}
	return (sums[0] + sums[1]) + (sums[2] + sums[3])
}

// AxpyRow adds alpha · x_i to y.
func (s *SparsePatterns) AxpyRow(alpha float64, i int, y []float64) {
	if len(y) != s.width {
		panic("fit: SparsePatterns.AxpyRow of a slice of the wrong length")
	}
	_, active, values := s.entries(i)
	for _, k := range active {
		if k&valued != 0 {
			y[k&^valued] += alpha * values[0]
			values = values[1:]
		} else {
			y[k] += alpha
		}
	}
}

// touchRow reads row i's record and the first and last of its inputs.
func (s *SparsePatterns) touchRow(i int) uint64 {
	r := s.rows[i]
	return touchEntries(s.active, r.start, int(r.ends[3]))
}

// check reports whether s holds rows patterns; Append took finite values
// only.
func (s *SparsePatterns) check(rows int) error { return checkCount(s.Len(), rows) }
