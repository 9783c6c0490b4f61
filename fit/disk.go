package fit

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"sync"
	"sync/atomic"
)

// A DiskStore file holds encoded patterns and their class labels for a fit
// on more rows than memory holds. It is written once, front to back, by
// DiskWriter and read block by block. All numbers are little-endian.
//
//	offset  size  field
//	0       8     magic "DFPATSTO"
//	8       4     version, 1
//	12      4     kind: 1 = packed 0/1 rows, 2 = float32 rows
//	16      8     rows
//	24      4     inputs per row (width)
//	28      4     classes
//	32      4     rows per block, B
//	36      4     bytes per row of patterns, R: ⌈width/8⌉ packed, 4·width float32
//	40      24    zero
//	64            the blocks, one after another
//
// Block b holds rows b·B to min((b+1)·B, rows)−1, m of them: first their m
// class labels, one byte each, then their m patterns, R bytes each. A
// packed row holds input k in bit k mod 8 (least significant first) of
// byte k div 8, 1 when the input is 1; the unused high bits of the last
// byte are 0. A float32 row holds the inputs in order, each rounded to the
// nearest float32 (so a float32 store trains on inputs rounded to 24-bit
// mantissas; the weights, sums and outputs stay float64). Block b starts
// at byte 64 + b·B·(1 + R), so any block is read with one seek.
const (
	diskMagic      = "DFPATSTO"
	diskVersion    = 1
	diskHeaderSize = 64
	diskPacked     = 1
	diskFloat32    = 2
	// maxDiskClasses is the most classes a store holds: labels are bytes.
	maxDiskClasses = 256
)

// DiskBlockRows returns the rows per block of a DiskStore of patterns of
// width inputs, packed or not: about 4 MiB of patterns a block, at least
// 64 rows and at most 65536.
func DiskBlockRows(width int, packed bool) int {
	rowBytes := diskRowBytes(width, packed)
	return max(64, min(1<<16, (4<<20)/(rowBytes+1)))
}

func diskRowBytes(width int, packed bool) int {
	if packed {
		return (width + 7) / 8
	}
	return 4 * width
}

// DiskWriter writes a DiskStore file row by row (see the layout above).
// It holds one block in memory.
type DiskWriter struct {
	file      *os.File
	w         *bufio.Writer
	packed    bool
	width     int
	classes   int
	blockRows int
	rowBytes  int
	rows      int
	labels    []byte // of the block being filled
	patterns  []byte
	err       error
}

// CreateDiskStore creates the file at path for patterns of width inputs
// and labels of numClasses classes (2 to 256), blockRows rows a block
// (DiskBlockRows), packed as 0/1 bits or as float32 values.
func CreateDiskStore(path string, width, numClasses, blockRows int, packed bool) (*DiskWriter, error) {
	switch {
	case width < 0 || (packed && width > maxBinaryWidth):
		return nil, fmt.Errorf("fit: a disk store of %d inputs", width)
	case numClasses < 2 || numClasses > maxDiskClasses:
		return nil, fmt.Errorf("fit: a disk store holds 2 to %d classes, not %d", maxDiskClasses, numClasses)
	case blockRows < 1 || blockRows > math.MaxInt32:
		return nil, fmt.Errorf("fit: a disk store block of %d rows", blockRows)
	}
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE|os.O_TRUNC, 0o600)
	if err != nil {
		return nil, fmt.Errorf("fit: %w", err)
	}
	w := &DiskWriter{file: f, w: bufio.NewWriterSize(f, 1<<20), packed: packed, width: width, classes: numClasses,
		blockRows: blockRows, rowBytes: diskRowBytes(width, packed)}
	w.labels = make([]byte, 0, blockRows)
	w.patterns = make([]byte, 0, blockRows*w.rowBytes)
	// The header is written again with the row count by Close.
	if _, err := w.w.Write(w.header()); err != nil {
		w.Abort()
		return nil, fmt.Errorf("fit: %w", err)
	}
	return w, nil
}

func (w *DiskWriter) header() []byte {
	h := make([]byte, diskHeaderSize)
	copy(h, diskMagic)
	kind := uint32(diskFloat32)
	if w.packed {
		kind = diskPacked
	}
	le := binary.LittleEndian
	le.PutUint32(h[8:], diskVersion)
	le.PutUint32(h[12:], kind)
	le.PutUint64(h[16:], uint64(w.rows))
	le.PutUint32(h[24:], uint32(w.width))
	le.PutUint32(h[28:], uint32(w.classes))
	le.PutUint32(h[32:], uint32(w.blockRows))
	le.PutUint32(h[36:], uint32(w.rowBytes))
	return h
}

// Append adds a row: its pattern, width values, and its class. A value
// that is not 0 or 1 in a packed store, or not finite as a float32, is an
// error naming the row and input (0-based).
func (w *DiskWriter) Append(row []float64, class int) error {
	if w.err != nil {
		return w.err
	}
	if len(row) != w.width {
		return fmt.Errorf("fit: DiskWriter.Append of %d values, want %d", len(row), w.width)
	}
	if class < 0 || class >= w.classes {
		return fmt.Errorf("fit: pattern %d has class %d, want 0 to %d", w.rows, class, w.classes-1)
	}
	start := len(w.patterns)
	w.patterns = w.patterns[:start+w.rowBytes]
	out := w.patterns[start:]
	clear(out)
	for k, v := range row {
		if w.packed {
			switch {
			case v == 1:
				out[k>>3] |= 1 << (k & 7)
			case v != 0 || math.Signbit(v):
				return fmt.Errorf("fit: pattern %d input %d is %v, not 0 or 1, in a packed store", w.rows, k, v)
			}
			continue
		}
		f := float32(v)
		if math.IsNaN(float64(f)) || math.IsInf(float64(f), 0) {
			return fmt.Errorf("fit: pattern %d input %d is not finite as a float32 (%v)", w.rows, k, v)
		}
		binary.LittleEndian.PutUint32(out[4*k:], math.Float32bits(f))
	}
	w.labels = append(w.labels, byte(class))
	w.rows++
	if len(w.labels) == w.blockRows {
		return w.flush()
	}
	return nil
}

// flush writes the block filled so far.
func (w *DiskWriter) flush() error {
	if _, err := w.w.Write(w.labels); err != nil {
		w.err = fmt.Errorf("fit: %w", err)
		return w.err
	}
	if _, err := w.w.Write(w.patterns); err != nil {
		w.err = fmt.Errorf("fit: %w", err)
		return w.err
	}
	w.labels, w.patterns = w.labels[:0], w.patterns[:0]
	return nil
}

// Rows is the number of rows appended so far.
func (w *DiskWriter) Rows() int { return w.rows }

// Close writes the last block and the header with the row count, and
// closes the file. After an error the file is incomplete: Abort removes
// it.
func (w *DiskWriter) Close() error {
	if w.err == nil && len(w.labels) > 0 {
		w.flush()
	}
	if w.err == nil {
		if err := w.w.Flush(); err != nil {
			w.err = fmt.Errorf("fit: %w", err)
		}
	}
	if w.err == nil {
		if _, err := w.file.WriteAt(w.header(), 0); err != nil {
			w.err = fmt.Errorf("fit: %w", err)
		}
	}
	if err := w.file.Close(); err != nil && w.err == nil {
		w.err = fmt.Errorf("fit: %w", err)
	}
	return w.err
}

// Abort closes and removes the file.
func (w *DiskWriter) Abort() {
	w.file.Close()
	os.Remove(w.file.Name())
}

// DiskStore is a Store read from a DiskStore file (see the layout above)
// block by block, holding at most a few decoded blocks in memory: a fit on
// more rows than memory holds. Train it with Options.Block set to
// BlockRows, so that each online epoch reads each block once, and with
// TrainBytesContext on the labels of Classes.
//
// A block is decoded as the package's in-memory stores hold rows: packed
// rows as BinaryPatterns, float32 rows as float64 Patterns, and the
// store's RowKernels are theirs, so a fit on a DiskStore gives the same
// bits as a fit on those stores in memory with the same Options (Block
// included). Its reads are safe for concurrent use: the decoded blocks sit
// in a small direct-mapped cache of slots that readers swap atomically,
// and a decoded block is never changed, so a reader that loses its slot
// keeps a valid block.
//
// The Store interface has no errors: a block that cannot be read or holds
// values that are not finite reads as zeros, and Err returns the first
// such error. Check Err after training.
type DiskStore struct {
	file      *os.File
	packed    bool
	rows      int
	width     int
	classes   int
	blockRows int
	rowBytes  int
	slots     []atomic.Pointer[diskBlock]

	mu  sync.Mutex
	err error
}

// diskBlock is a decoded block: rows from index·blockRows on.
type diskBlock struct {
	index  int
	packed *BinaryPatterns
	dense  Patterns
}

// DefaultDiskCacheBlocks is the number of decoded blocks a DiskStore
// keeps when OpenDiskStore is given 0.
const DefaultDiskCacheBlocks = 8

// OpenDiskStore opens a DiskStore file, keeping up to cacheBlocks decoded
// blocks (0: DefaultDiskCacheBlocks). A file whose header or size does not
// match the layout is an error.
func OpenDiskStore(path string, cacheBlocks int) (*DiskStore, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("fit: %w", err)
	}
	s, err := readDiskHeader(f)
	if err != nil {
		f.Close()
		return nil, fmt.Errorf("fit: %s: %w", path, err)
	}
	if cacheBlocks <= 0 {
		cacheBlocks = DefaultDiskCacheBlocks
	}
	s.slots = make([]atomic.Pointer[diskBlock], cacheBlocks)
	return s, nil
}

func readDiskHeader(f *os.File) (*DiskStore, error) {
	h := make([]byte, diskHeaderSize)
	if _, err := io.ReadFull(f, h); err != nil {
		return nil, errors.New("not a pattern store: too short")
	}
	if string(h[:8]) != diskMagic {
		return nil, errors.New("not a pattern store")
	}
	le := binary.LittleEndian
	if v := le.Uint32(h[8:]); v != diskVersion {
		return nil, fmt.Errorf("pattern store version %d, want %d", v, diskVersion)
	}
	kind := le.Uint32(h[12:])
	rows, width := le.Uint64(h[16:]), int(le.Uint32(h[24:]))
	s := &DiskStore{file: f, packed: kind == diskPacked, width: width, classes: int(le.Uint32(h[28:])),
		blockRows: int(le.Uint32(h[32:])), rowBytes: int(le.Uint32(h[36:]))}
	switch {
	case kind != diskPacked && kind != diskFloat32:
		return nil, fmt.Errorf("pattern store of unknown kind %d", kind)
	case s.packed && width > maxBinaryWidth:
		return nil, fmt.Errorf("packed pattern store of %d inputs", width)
	case s.rowBytes != diskRowBytes(width, s.packed):
		return nil, fmt.Errorf("pattern store rows of %d bytes for %d inputs", s.rowBytes, width)
	case s.classes < 2 || s.classes > maxDiskClasses || s.blockRows < 1:
		return nil, errors.New("pattern store header out of range")
	case rows > math.MaxInt64/uint64(1+s.rowBytes):
		return nil, errors.New("pattern store of too many rows")
	}
	s.rows = int(rows)
	fi, err := f.Stat()
	if err != nil {
		return nil, err
	}
	if want := int64(diskHeaderSize) + int64(s.rows)*int64(1+s.rowBytes); fi.Size() != want {
		return nil, fmt.Errorf("pattern store of %d bytes, want %d for its %d rows", fi.Size(), want, s.rows)
	}
	return s, nil
}

// Close closes the file.
func (s *DiskStore) Close() error { return s.file.Close() }

// Err returns the first error of a read since the store was opened.
func (s *DiskStore) Err() error {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.err
}

func (s *DiskStore) fail(err error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.err == nil {
		s.err = err
	}
}

// Len returns the number of patterns.
func (s *DiskStore) Len() int { return s.rows }

// Inputs returns the number of inputs of each pattern.
func (s *DiskStore) Inputs() int { return s.width }

// NumClasses returns the number of classes of the labels.
func (s *DiskStore) NumClasses() int { return s.classes }

// BlockRows returns the rows per block: the Options.Block to train with.
func (s *DiskStore) BlockRows() int { return s.blockRows }

// Packed reports whether the rows are packed 0/1 inputs.
func (s *DiskStore) Packed() bool { return s.packed }

// blockSpan returns the rows in block b and the file offset of its labels.
func (s *DiskStore) blockSpan(b int) (rows int, offset int64) {
	first := b * s.blockRows
	return min(s.blockRows, s.rows-first), diskHeaderSize + int64(first)*int64(1+s.rowBytes)
}

// Classes reads every row's class label, one byte each.
func (s *DiskStore) Classes() ([]uint8, error) {
	classes := make([]uint8, 0, s.rows)
	for b := 0; b*s.blockRows < s.rows; b++ {
		m, offset := s.blockSpan(b)
		start := len(classes)
		classes = classes[:start+m]
		if _, err := s.file.ReadAt(classes[start:], offset); err != nil {
			return nil, fmt.Errorf("fit: reading the pattern store: %w", err)
		}
	}
	for i, c := range classes {
		if int(c) >= s.classes {
			return nil, fmt.Errorf("fit: pattern store row %d has class %d of %d", i, c, s.classes)
		}
	}
	return classes, nil
}

// block returns decoded block b, from the cache or read now.
func (s *DiskStore) block(b int) *diskBlock {
	slot := &s.slots[b%len(s.slots)]
	if blk := slot.Load(); blk != nil && blk.index == b {
		return blk
	}
	blk := s.load(b)
	slot.Store(blk)
	return blk
}

// rawPool holds the buffers blocks are read into before decoding.
var rawPool sync.Pool

// load reads and decodes block b; on an error it records it and returns a
// block of zeros.
func (s *DiskStore) load(b int) *diskBlock {
	m, offset := s.blockSpan(b)
	size := m * s.rowBytes
	raw, _ := rawPool.Get().(*[]byte)
	if raw == nil || cap(*raw) < size {
		buf := make([]byte, size)
		raw = &buf
	}
	data := (*raw)[:size]
	defer rawPool.Put(raw)
	if _, err := s.file.ReadAt(data, offset+int64(m)); err != nil {
		s.fail(fmt.Errorf("fit: reading block %d of the pattern store: %w", b, err))
		clear(data)
	}
	blk := &diskBlock{index: b}
	if s.packed {
		ones := 0
		for _, x := range data {
			ones += popcount8[x]
		}
		p := newBinaryPatterns(s.width, m, ones)
		for i := range m {
			row := data[i*s.rowBytes : (i+1)*s.rowBytes]
			p.appendRow(func(k int) bool { return row[k>>3]>>(k&7)&1 == 1 })
		}
		blk.packed = p
		return blk
	}
	values := make([]float64, m*s.width)
	for k := range values {
		v := float64(math.Float32frombits(binary.LittleEndian.Uint32(data[4*k:])))
		if math.IsNaN(v) || math.IsInf(v, 0) {
			s.fail(fmt.Errorf("fit: pattern store row %d input %d is not finite", b*s.blockRows+k/s.width, k%s.width))
			v = 0
		}
		values[k] = v
	}
	blk.dense = Patterns{Width: s.width, Values: values, Rows: m}
	return blk
}

// popcount8 is the number of 1 bits of each byte.
var popcount8 = func() (t [256]int) {
	for i := range t {
		for x := i; x > 0; x &= x - 1 {
			t[i]++
		}
	}
	return t
}()

// at returns the decoded block of pattern i and i's row in it. It panics
// if i is out of range.
func (s *DiskStore) at(i int) (*diskBlock, int) {
	if i < 0 || i >= s.rows {
		panic(fmt.Sprintf("fit: DiskStore row %d outside [0, %d)", i, s.rows))
	}
	b := i / s.blockRows
	return s.block(b), i - b*s.blockRows
}

// RowTo writes pattern i into dst (made when nil) and returns it. It
// panics if i is out of range or dst is neither nil nor Inputs() long.
func (s *DiskStore) RowTo(dst []float64, i int) []float64 {
	if dst == nil {
		dst = make([]float64, s.width)
	}
	if len(dst) != s.width {
		panic(fmt.Sprintf("fit: DiskStore.RowTo: dst of %d values, want %d", len(dst), s.width))
	}
	blk, r := s.at(i)
	if blk.packed != nil {
		return blk.packed.RowTo(dst, r)
	}
	copy(dst, blk.dense.Row(r))
	return dst
}

// DotRow returns w · x_i, summed as the block's in-memory store sums it.
func (s *DiskStore) DotRow(i int, w []float64) float64 {
	blk, r := s.at(i)
	if blk.packed != nil {
		return blk.packed.DotRow(r, w)
	}
	return dot(w, blk.dense.Row(r))
}

// AxpyRow adds alpha · x_i to y.
func (s *DiskStore) AxpyRow(alpha float64, i int, y []float64) {
	blk, r := s.at(i)
	if blk.packed != nil {
		blk.packed.AxpyRow(alpha, r, y)
		return
	}
	axpy(alpha, blk.dense.Row(r), y)
}

// check reports whether s holds rows patterns; their values were checked
// when written, and are checked again as blocks are read (Err).
func (s *DiskStore) check(rows int) error {
	if s.rows != rows {
		return fmt.Errorf("fit: %d patterns but %d class labels", s.rows, rows)
	}
	return nil
}
