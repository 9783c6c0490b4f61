package fit

import "fmt"

// Store is a read-only set of encoded input patterns, each Inputs() values
// long. Training, the automatic rate and the measurement of each epoch read
// patterns only through it, so a store may keep them in any form: dense
// float64 rows (Patterns), a view of some rows of another store (Subset),
// or later float32 values, packed 0/1 units or rows streamed from disk.
//
// A Store must be safe for concurrent reads: an epoch is measured by
// several goroutines at once, and cross-validation trains on views of one
// store in parallel.
//
// Where a new store plugs in: implement the three methods below; if the
// store can compute with a row without writing it out as float64 values
// (a packed 0/1 store adds only the weights of its active inputs), also
// implement RowKernels, which the trainer then uses for every net input
// and every weight change instead of RowTo.
type Store interface {
	// Len returns the number of patterns.
	Len() int
	// Inputs returns the number of inputs of each pattern. It may be 0:
	// such patterns feed only the bias.
	Inputs() int
	// RowTo returns pattern i, 0 ≤ i < Len(). A store that holds its rows
	// as float64 values returns a view of its own storage and leaves dst
	// alone; any other store writes the row into dst, which must be nil
	// (a new slice is then made) or Inputs() long, and returns dst. Either
	// way the caller must not modify the result. A store always does one
	// or the other, so a caller that keeps one dst per goroutine never
	// writes into a store. It panics if i is out of range.
	RowTo(dst []float64, i int) []float64
}

// RowKernels is an optional fast path of a Store: the two products the
// delta rule needs, computed on pattern i in place. The trainer uses them
// when the store implements them; the results must equal dot and axpy on
// the row RowTo returns up to the round-off of another summation order (a
// store that sums in the same order as the package's kernels keeps
// training bit-for-bit identical). Both panic if i is out of range or the
// slice is not Inputs() long.
type RowKernels interface {
	// DotRow returns w · x_i.
	DotRow(i int, w []float64) float64
	// AxpyRow adds alpha · x_i to y.
	AxpyRow(alpha float64, i int, y []float64)
}

// Subset returns the view of s that holds the patterns rows[0], rows[1],
// … of s, in that order: pattern i of the view is pattern rows[i] of s.
// Nothing is copied, so the folds of a cross-validation can train on views
// of one store. The view keeps rows, which must not change while it is in
// use. It panics if a row is outside [0, s.Len()).
func Subset(s Store, rows []int) Store {
	n := s.Len()
	for _, r := range rows {
		if r < 0 || r >= n {
			panic(fmt.Sprintf("fit: Subset: row %d outside [0, %d)", r, n))
		}
	}
	if k, ok := s.(RowKernels); ok {
		return subsetKernels{subset{s, rows}, k}
	}
	return subset{s, rows}
}

// subset is the view Subset returns for a store without RowKernels.
type subset struct {
	store Store
	rows  []int
}

func (s subset) Len() int                             { return len(s.rows) }
func (s subset) Inputs() int                          { return s.store.Inputs() }
func (s subset) RowTo(dst []float64, i int) []float64 { return s.store.RowTo(dst, s.rows[i]) }

// subsetKernels is the view Subset returns for a store with RowKernels,
// which it passes on.
type subsetKernels struct {
	subset
	kernels RowKernels
}

func (s subsetKernels) DotRow(i int, w []float64) float64 { return s.kernels.DotRow(s.rows[i], w) }

func (s subsetKernels) AxpyRow(alpha float64, i int, y []float64) {
	s.kernels.AxpyRow(alpha, s.rows[i], y)
}

func (s subset) touchRow(i int) uint64 { return touchRow(s.store, s.rows[i]) }

// rowToucher is implemented by stores that can load a row into the cache
// ahead of its use: touchRow reads a value of every cache line of pattern
// i and returns something made of them, so the reads are not left out.
// An online epoch visits rows in a shuffled order, so each row would
// otherwise be a cache miss waited on; touching a block of rows ahead
// lets the loads overlap. It changes no arithmetic.
type rowToucher interface {
	touchRow(i int) uint64
}

// touchRow touches pattern i of s when s is a rowToucher.
func touchRow(s Store, i int) uint64 {
	if t, ok := s.(rowToucher); ok {
		return t.touchRow(i)
	}
	return 0
}

// checker is implemented by the package's stores that check themselves
// faster than row by row: that they are well formed, hold rows patterns
// and every value is finite.
type checker interface {
	check(rows int) error
}

// checkStore reports whether s holds rows patterns, well formed and
// finite. A view, or a store of another package, is checked row by row
// through RowTo, so a view is checked on its own rows only.
func checkStore(s Store, rows int) error {
	if c, ok := s.(checker); ok {
		return c.check(rows)
	}
	width := s.Inputs()
	switch {
	case width < 0:
		return fmt.Errorf("fit: negative pattern width %d", width)
	case s.Len() != rows:
		return fmt.Errorf("fit: %d patterns but %d class labels", s.Len(), rows)
	}
	buf := make([]float64, width)
	for i := range rows {
		x := s.RowTo(buf, i)
		if len(x) != width {
			return fmt.Errorf("fit: pattern %d has %d inputs, want %d", i, len(x), width)
		}
		for k, v := range x {
			if !finite(v) {
				return fmt.Errorf("fit: pattern %d input %d is not finite (%v)", i, k, v)
			}
		}
	}
	return nil
}
