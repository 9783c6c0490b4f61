package fit

import (
	"math"
	"math/rand/v2"
	"testing"
)

// hybridPatterns turns thermometer patterns into hybrid-like ones: every
// unit of a column's block that is the block's first is set to a value
// drawn from N(0,1) (a linear unit), a few of them −0 or 0.
func hybridPatterns(rows, cols, units, classes int) (Patterns, []int) {
	p, labels := thermometerPatterns(rows, cols, units, classes)
	rng := rand.New(rand.NewPCG(9, 10))
	for i := 0; i < len(p.Values); i += units {
		switch rng.IntN(20) {
		case 0:
			p.Values[i] = math.Copysign(0, -1)
		case 1:
			p.Values[i] = 0
		default:
			p.Values[i] = rng.NormFloat64()
		}
	}
	return p, labels
}

func sparseOf(t *testing.T, p Patterns) *SparsePatterns {
	t.Helper()
	s, ok := NewSparsePatterns(p.Width, p.Len())
	if !ok || !s.Append(p) {
		t.Fatal("patterns not stored sparse")
	}
	return s
}

// The kernels give dot's and axpy's bits on the dense row at every width
// around the groups of four, and RowTo gives the row back, −0 included.
func TestSparseKernelsMatchDense(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, width := range []int{1, 2, 3, 4, 5, 7, 8, 9, 13, 72} {
		p := Patterns{Width: width, Values: make([]float64, 50*width)}
		for i := range p.Values {
			switch rng.IntN(4) {
			case 0:
				p.Values[i] = 1
			case 1:
				p.Values[i] = rng.NormFloat64()
			case 2:
				if rng.IntN(5) == 0 {
					p.Values[i] = math.Copysign(0, -1)
				}
			}
		}
		s := sparseOf(t, p)
		for i := range p.Len() {
			w := randomVector(rng, width)
			if got, want := s.DotRow(i, w), dot(w, p.Row(i)); math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("width %d row %d: DotRow %v, dot %v", width, i, got, want)
			}
			got, want := append([]float64(nil), w...), append([]float64(nil), w...)
			s.AxpyRow(0.3, i, got)
			axpy(0.3, p.Row(i), want)
			for k := range got {
				if math.Float64bits(got[k]) != math.Float64bits(want[k]) {
					t.Fatalf("width %d row %d: AxpyRow differs at %d: %v, axpy %v", width, i, k, got[k], want[k])
				}
			}
			row := s.RowTo(make([]float64, width), i)
			for k := range row {
				if math.Float64bits(row[k]) != math.Float64bits(p.Row(i)[k]) {
					t.Fatalf("width %d row %d: RowTo %v, want %v", width, i, row, p.Row(i))
				}
			}
		}
	}
}

// Training on the sparse store, or on a view of it, gives the dense
// store's Result to the bit, in every mode.
func TestSparseTrainsAsDense(t *testing.T) {
	p, labels := hybridPatterns(2*measureChunk+57, 5, 8, 3)
	trainsAsDense(t, p, sparseOf(t, p), labels)
}

// Append refuses a block with a value that is not finite, or of another
// width, and adds nothing then; widths past 32767 inputs are refused.
func TestSparseRefuses(t *testing.T) {
	s, ok := NewSparsePatterns(2, 0)
	if !ok {
		t.Fatal("width 2 refused")
	}
	for _, p := range []Patterns{
		{Width: 2, Values: []float64{1, math.NaN()}},
		{Width: 2, Values: []float64{math.Inf(-1), 0}},
		{Width: 3, Values: []float64{1, 0, 0.5}},
	} {
		if s.Append(p) {
			t.Errorf("%v appended", p.Values)
		}
	}
	if s.Len() != 0 || len(s.active) != 0 || len(s.values) != 0 {
		t.Errorf("a refused block left %d rows", s.Len())
	}
	for _, width := range []int{0, maxSparseWidth + 1} {
		if _, ok := NewSparsePatterns(width, 1); ok {
			t.Errorf("width %d accepted", width)
		}
	}
}
