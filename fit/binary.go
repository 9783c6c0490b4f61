package fit

import (
	"fmt"
	"math"
	"slices"
)

// BinaryPatterns is a Store of patterns whose every input is 0 or 1, as
// the thermometer, one-hot, threshold, flag and categorical encodings
// make them: each row is kept as the indices of its inputs that are 1,
// grouped by the partial sum of dot they belong to. A row of a thermometer:8 column costs at most 7 two-byte indices
// instead of 7 eight-byte values, and its kernels read and write only the
// weights of the active inputs.
//
// Its RowKernels give results identical to the bit to dot and axpy on the
// dense row, so training on it gives the same Result as on the Patterns it
// was packed from:
//
//   - dot keeps four partial sums, input k adding to sum k mod 4 (inputs
//     past the last whole group of four add to the first). DotRow adds
//     w_k·1 = w_k to the same partial sum in the same ascending order (it
//     keeps each sum's indices together, so the four sums step side by
//     side) and leaves out the terms w_k·0 = ±0. A partial sum starts at +0 and, in
//     round-to-nearest, is never −0 (x + (−x) is +0, and +0 + (−0) is
//     +0), so adding ±0 never changes it: the sums, and their combination
//     (s0 + s1) + (s2 + s3), are the same.
//   - axpy adds alpha·x_k to y_k; for x_k = 1 that is y_k + alpha, which
//     AxpyRow adds; for x_k = 0 it adds ±0, which leaves y_k unchanged
//     unless y_k is −0. Weights and sums start at +0 and can reach −0 only
//     by L2 shrinking a negative weight to nothing (an underflow); such a
//     weight then keeps its −0 here where the dense path might make it +0,
//     which no net input, sum or average can see (see dot above). Only the
//     last weights of a LastIterate run with L2 could show the sign.
//   - With a weight that is not finite (a diverging run) the dense terms
//     ∞·0 are NaN where the packed ones are left out; either way the run
//     ends with ErrDiverged after the same epoch.
//
// RowTo writes the row's 0s and 1s into dst, so the automatic rate and
// every other reader see exactly the dense values.
type BinaryPatterns struct {
	width int
	rows  []binaryRow
	// active holds each row's indices in four groups, one per partial
	// sum of dot, each ascending: inputs k ≡ 0 mod 4 then the tail
	// (k ≥ tail), then k ≡ 1, k ≡ 2 and k ≡ 3 mod 4 below tail.
	active []uint16
	tail   int // first input of dot's tail loop: width rounded down to a multiple of 4
}

// binaryRow locates a row's indices: active[start:start+ends[3]], its
// groups ending at ends[0], ends[1], ends[2] and ends[3] from start. One
// record per row, so that a row visited out of order costs one miss
// besides its indices.
type binaryRow struct {
	start int
	ends  [4]uint16
}

// maxBinaryWidth is the widest pattern BinaryPatterns holds: its indices
// and counts are 16 bits.
const maxBinaryWidth = math.MaxUint16

// PackBinary returns p packed as BinaryPatterns, and true, when every
// value of p is +0 or 1 and its width is between 1 and 65535 inputs;
// otherwise nil and false.
func PackBinary(p Patterns) (*BinaryPatterns, bool) {
	b, ok := NewBinaryPatterns(p.Width, p.Len())
	if !ok || !b.Append(p) {
		return nil, false
	}
	return b, true
}

// NewBinaryPatterns returns empty BinaryPatterns of width inputs with room
// for rows patterns, for Append to fill, and true; for a width outside 1
// to 65535 it returns nil and false.
func NewBinaryPatterns(width, rows int) (*BinaryPatterns, bool) {
	if width <= 0 || width > maxBinaryWidth {
		return nil, false
	}
	return newBinaryPatterns(width, max(rows, 0), 0), true
}

// Append adds the patterns of p, as wide as b's, after b's and returns
// true when every value of p is +0 or 1; otherwise it adds none of them
// and returns false. A table can so be packed a block of rows at a time,
// never dense as a whole.
func (b *BinaryPatterns) Append(p Patterns) bool {
	if p.Width != b.width || len(p.Values)%p.Width != 0 {
		return false
	}
	ones := 0
	for _, v := range p.Values {
		switch v {
		case 1:
			ones++
		case 0:
			if math.Signbit(v) {
				return false // −0: RowTo could not give it back
			}
		default:
			return false
		}
	}
	b.active = slices.Grow(b.active, reserve(ones, len(b.rows), p.Len(), cap(b.rows)))
	for i := range p.Len() {
		row := p.Row(i)
		b.appendRow(func(k int) bool { return row[k] == 1 })
	}
	return true
}

// reserve returns the room to make for n more entries of a store of rows
// patterns that is given p more: n, or on the first block of a store made
// for capRows patterns, room for all of them at the first block's entries
// a pattern, and an eighth more, so that a table filled block by block is
// not copied each time its entries outgrow their slice.
func reserve(n, rows, p, capRows int) int {
	if rows > 0 || p == 0 || capRows <= p {
		return n
	}
	return max(n, n*capRows/p*9/8)
}

// newBinaryPatterns returns BinaryPatterns of width inputs with room for
// rows patterns and ones active inputs, for appendRow to fill.
func newBinaryPatterns(width, rows, ones int) *BinaryPatterns {
	return &BinaryPatterns{width: width, rows: make([]binaryRow, 0, rows), active: make([]uint16, 0, ones), tail: width &^ 3}
}

// appendRow adds a pattern whose inputs k are 1 where one(k) is true, in
// dot's groups.
func (b *BinaryPatterns) appendRow(one func(k int) bool) {
	r := binaryRow{start: len(b.active)}
	for g := range 4 {
		for k := g; k < b.tail; k += 4 {
			if one(k) {
				b.active = append(b.active, uint16(k))
			}
		}
		if g == 0 {
			for k := b.tail; k < b.width; k++ {
				if one(k) {
					b.active = append(b.active, uint16(k))
				}
			}
		}
		r.ends[g] = uint16(len(b.active) - r.start)
	}
	b.rows = append(b.rows, r)
}

// indices returns row i's indices, the whole and its four groups.
func (b *BinaryPatterns) indices(i int) (all, g0, g1, g2, g3 []uint16) {
	r := b.rows[i]
	all = b.active[r.start : r.start+int(r.ends[3])]
	return all, all[:r.ends[0]], all[r.ends[0]:r.ends[1]], all[r.ends[1]:r.ends[2]], all[r.ends[2]:]
}

// Compact returns the smallest store of the package that holds the
// patterns of p with the same training results: BinaryPatterns when
// PackBinary can pack p, else p itself.
func Compact(p Patterns) Store {
	if b, ok := PackBinary(p); ok {
		return b
	}
	return p
}

// Len returns the number of patterns.
func (b *BinaryPatterns) Len() int { return len(b.rows) }

// Inputs returns the number of inputs of each pattern.
func (b *BinaryPatterns) Inputs() int { return b.width }

// RowTo writes pattern i as 0s and 1s into dst (made when nil) and
// returns it. It panics if i is out of range or dst is neither nil nor
// Inputs() long.
func (b *BinaryPatterns) RowTo(dst []float64, i int) []float64 {
	dst = rowBuffer(dst, b.width, "BinaryPatterns")
	all, _, _, _, _ := b.indices(i)
	for _, k := range all {
		dst[k] = 1
	}
	return dst
}

// rowBuffer returns dst cleared, or a new row of width zeros for a nil
// dst, for a packed store's RowTo; it panics if dst is another length.
func rowBuffer(dst []float64, width int, store string) []float64 {
	if dst == nil {
		return make([]float64, width)
	}
	if len(dst) != width {
		panic(fmt.Sprintf("fit: %s.RowTo: dst of %d values, want %d", store, len(dst), width))
	}
	clear(dst)
	return dst
}

// DotRow returns w · x_i, summed as dot sums it (see BinaryPatterns).
func (b *BinaryPatterns) DotRow(i int, w []float64) float64 {
	if len(w) != b.width {
		panic("fit: BinaryPatterns.DotRow of a slice of the wrong length")
	}
	_, g0, g1, g2, g3 := b.indices(i)
	var s0, s1, s2, s3 float64
	// The four sums are independent: step them together while every
	// group has indices left, then finish each.
	common := min(len(g0), len(g1), len(g2), len(g3))
	for k := range common {
		s0 += w[g0[k]]
		s1 += w[g1[k]]
		s2 += w[g2[k]]
		s3 += w[g3[k]]
	}
	for _, k := range g0[common:] {
		s0 += w[k]
	}
	for _, k := range g1[common:] {
		s1 += w[k]
	}
	for _, k := range g2[common:] {
		s2 += w[k]
	}
	for _, k := range g3[common:] {
		s3 += w[k]
	}
	return (s0 + s1) + (s2 + s3)
}

// AxpyRow adds alpha · x_i to y: alpha to the inputs of pattern i that
// are 1.
func (b *BinaryPatterns) AxpyRow(alpha float64, i int, y []float64) {
	if len(y) != b.width {
		panic("fit: BinaryPatterns.AxpyRow of a slice of the wrong length")
	}
	all, _, _, _, _ := b.indices(i)
	for _, k := range all {
		y[k] += alpha
	}
}

// touchRow reads row i's record and the first and last of its indices.
func (b *BinaryPatterns) touchRow(i int) uint64 {
	r := b.rows[i]
	return touchEntries(b.active, r.start, int(r.ends[3]))
}

// touchEntries reads the first and last of a packed row's n entries,
// which start at start, and mixes them into a value the caller keeps.
func touchEntries(active []uint16, start, n int) uint64 {
	x := uint64(start)
	if n > 0 {
		x ^= uint64(active[start]) ^ uint64(active[start+n-1])
	}
	return x
}

// check reports whether b holds rows patterns; its values are 0 or 1, so
// always finite.
func (b *BinaryPatterns) check(rows int) error { return checkCount(b.Len(), rows) }

// checkCount reports whether a store of n patterns fits rows labels.
func checkCount(n, rows int) error {
	if n != rows {
		return fmt.Errorf("fit: %d patterns but %d class labels", n, rows)
	}
	return nil
}
