package ingest

import (
	"bufio"
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"runtime"
	"strings"
	"sync/atomic"
	"unicode/utf8"

	"deltafit/ingest/tabular"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/file"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"
)

// Format is an input file format.
type Format string

const (
	FormatAuto    Format = ""        // sniffed from the first bytes
	FormatCSV     Format = "csv"     // delimited text with a header row
	FormatArrow   Format = "arrow"   // Arrow IPC, file or stream
	FormatParquet Format = "parquet" // Apache Parquet
)

// ParseFormat parses "auto", "csv", "arrow" or "parquet".
func ParseFormat(s string) (Format, error) {
	switch s {
	case "", "auto":
		return FormatAuto, nil
	case "csv", "arrow", "parquet":
		return Format(s), nil
	}
	return "", fmt.Errorf("ingest: unknown input format %q (want auto, csv, arrow or parquet)", s)
}

// ReadOptions says how to read a table. The zero value reads any supported
// format with a comma delimiter and inferred column kinds.
type ReadOptions struct {
	// Format of the input; FormatAuto (default) sniffs it.
	Format Format
	// Delimiter separates CSV fields; 0 means ','.
	Delimiter rune
	// Missing are cell texts read as missing in CSV, besides NullValues
	// (such as "?" or "-999").
	Missing []string
	// Target names the column of class labels. Unless Kinds declares its
	// kind, its cells are kept as written (a class label is text: "007"
	// and "7" are two labels), and the column is marked LabelText.
	Target string
	// Kinds overrides inferred column kinds by column name; naming a
	// column the input does not have is an error.
	Kinds map[string]tabular.Kind
	// Expected gives the kinds a model was trained with, by column name.
	// It applies where Kinds says nothing, and absent columns are not an
	// error here (the model's plan reports the ones it needs).
	Expected map[string]tabular.Kind
	// BatchRows is the number of rows per record batch; 0 means 4096.
	BatchRows int
	// Allocator for Arrow memory; nil means memory.DefaultAllocator.
	// NewRecordReader caps what it holds at MaxReaderBytes.
	Allocator memory.Allocator
	// Warn, if not nil, is called by Collect with each warning: data read
	// as something other than it says (a nonzero number too small for a
	// float64, read as 0), one per column with a count and the first row.
	Warn func(*tabular.DataError)
	// Source, when not nil, reads the same bytes as the reader given to
	// NewRecordReader, at any offset (a regular file: io.NewSectionReader
	// of it). Parquet is then read from it in place, the pages of a row
	// group at a time, instead of whole into memory first; the reader
	// given is read no further than its first bytes, so a caller that
	// hashes it reads the rest itself.
	Source *io.SectionReader
}

func (o ReadOptions) batchRows() int {
	if o.BatchRows > 0 {
		return o.BatchRows
	}
	return 4096
}

func (o ReadOptions) allocator() memory.Allocator {
	if o.Allocator != nil {
		return o.Allocator
	}
	return memory.DefaultAllocator
}

// MaxHeaderBytes caps the size of a CSV header line.
const MaxHeaderBytes = 1 << 20

// MaxCellBytes caps the size of one text cell. A longer cell is an error
// naming it: it is far more often an open quote that swallowed the rest of
// the file than a value worth a category of its own. CSV cells are checked
// as they are read, before anything holds them whole.
const MaxCellBytes = 1 << 20

// MaxRecordBytes caps one CSV record (a row, quoted line breaks and all),
// checked as it is read: the CSV parser holds a whole record in memory, in
// buffers that grow by a quarter at a time, so a record costs about ten
// times its size in allocations.
const MaxRecordBytes = 8 << 20

// MaxArrowBodyBytes caps one record batch of an Arrow IPC input: its body
// as stored, and, when compressed, the decompressed lengths its buffers
// declare. arrow-go allocates a compressed buffer from its declared length
// before it decompresses, so each declared length is also checked against
// what the buffer's frames can produce; write larger data in smaller
// batches.
const MaxArrowBodyBytes = 1 << 30

// MaxColumns caps the columns of a table. An Arrow schema counts every
// field, nested ones too (a field list may name one field a million times
// in 4 MB, and arrow-go builds each); a CSV header or Parquet schema counts
// its columns.
const MaxColumns = 1 << 17

// MaxReaderBytes caps the Arrow memory a reader holds at once (decoded
// batches, dictionaries, decompression and page buffers). arrow-go
// allocates on the reader's behalf from lengths in the file; an allocation
// past the cap ends the read with an error instead.
const MaxReaderBytes = 2 << 30

// MaxParquetPageBytes caps a Parquet page, compressed or not, and a
// compressed page may not claim more bytes than the file holds.
const MaxParquetPageBytes = 64 << 20

// NullValues are the cell texts read as missing.
var NullValues = []string{"", "NA"}

var (
	arrowFileMagic   = []byte("ARROW1")
	arrowStreamMagic = []byte{0xff, 0xff, 0xff, 0xff}
	parquetMagic     = []byte("PAR1")
	utf8BOM          = []byte{0xef, 0xbb, 0xbf}
)

// NewRecordReader returns a reader that streams record batches from r.
// name is used in error messages. CSV columns arrive as strings; use Collect
// to infer kinds. The caller must Release the reader.
//
// Arrow IPC files and Parquet keep their index at the end, so unless r is an
// io.ReaderAt and io.Seeker they are buffered in memory first; CSV and Arrow
// IPC streams are read as they arrive.
func NewRecordReader(name string, r io.Reader, opts ReadOptions) (array.RecordReader, error) {
	scope := newBatchScope(newCappedAllocator(opts.allocator(), MaxReaderBytes))
	opts.Allocator = scope
	// A reader that fails to open gives back what it allocated and still
	// holds: arrow-go's Parquet reader keeps a page buffer when a column
	// chunk names a codec it lacks.
	scope.begin()
	rr, err := newRecordReader(name, r, opts)
	scope.end(err != nil)
	if err != nil {
		var de *tabular.DataError
		if !errors.As(err, &de) {
			de = &tabular.DataError{Err: err}
		}
		if de.File == "" {
			de.File = name
		}
		return nil, de
	}
	return &guardedReader{RecordReader: rr, scope: scope}, nil
}

func newRecordReader(name string, r io.Reader, opts ReadOptions) (array.RecordReader, error) {
	br := bufio.NewReaderSize(r, 64<<10)
	head, err := br.Peek(8)
	if len(head) == 0 {
		if err != nil && !errors.Is(err, io.EOF) {
			return nil, &tabular.DataError{File: name, Err: err}
		}
		return nil, &tabular.DataError{File: name, Err: ErrEmpty}
	}
	format := opts.Format
	if format == FormatAuto {
		format = sniff(head)
	}
	switch format {
	case FormatCSV:
		return newCSVReader(name, br, opts)
	case FormatArrow:
		if bytes.HasPrefix(head, arrowFileMagic) {
			data, err := io.ReadAll(br)
			if err != nil {
				return nil, &tabular.DataError{File: name, Err: err}
			}
			if err := checkArrowFile(data); err != nil {
				return nil, &tabular.DataError{File: name, Err: fmt.Errorf("not a readable Arrow IPC file: %v", err)}
			}
			return newArrowFileReader(data, opts)
		}
		return newArrowStreamReader(br, opts)
	case FormatParquet:
		if opts.Source != nil {
			return newParquetReader(io.NewSectionReader(opts.Source, 0, opts.Source.Size()), opts)
		}
		data, err := io.ReadAll(br)
		if err != nil {
			return nil, &tabular.DataError{File: name, Err: err}
		}
		return newParquetReader(bytes.NewReader(data), opts)
	}
	return nil, &tabular.DataError{File: name, Err: fmt.Errorf("%w: format %q", ErrUnsupported, format)}
}

// decode calls fn, which hands untrusted bytes to arrow-go's decoders, and
// returns its error, or the decoders' panic as an error. The decoders
// panic on some malformed input (flatbuffers reading past a short buffer,
// a failed decompression), always with an error or a string, and
// cappedAllocator panics with *AllocationCapError; anything else is not
// theirs and panics on, as a bug should.
func decode(fn func() error) (err error) {
	defer func() {
		if p := recover(); p != nil {
			switch v := p.(type) {
			case error:
				err = v
			case string:
				err = errors.New(v)
			default:
				panic(fmt.Sprintf("ingest: unexpected panic in a decoder: %v", p))
			}
		}
		err = decoderError(err)
	}()
	return fn()
}

// errMalformed replaces a decoder's error that carries Go runtime text
// ("slice bounds out of range"), which says nothing to the user.
var errMalformed = fmt.Errorf("%w: the file is malformed (its data does not fit its own layout); is it truncated or of another format?", ErrUnsupported)

// decoderError makes an error that came out of arrow-go fit for the user:
// a refused allocation as itself, Go runtime errors as errMalformed.
func decoderError(err error) error {
	if err == nil {
		return nil
	}
	var capped *AllocationCapError
	if errors.As(err, &capped) {
		return capped
	}
	var rt runtime.Error
	if errors.As(err, &rt) || strings.Contains(err.Error(), "runtime error") {
		return errMalformed
	}
	return err
}

// guardedReader runs a reader's Next under decode, so a decoder's panic
// ends the read with an error, and cleans the reader's errors with
// decoderError.
type guardedReader struct {
	array.RecordReader
	scope *batchScope // the reader's allocator
	err   error
}

func (g *guardedReader) Next() bool {
	if g.err != nil {
		return false
	}
	next := false
	g.scope.begin()
	g.err = decode(func() error {
		next = g.RecordReader.Next()
		return nil
	})
	g.scope.end(g.err != nil || !next && g.RecordReader.Err() != nil)
	return next && g.err == nil
}

func (g *guardedReader) Err() error {
	if g.err != nil {
		return g.err
	}
	return decoderError(g.RecordReader.Err())
}

func sniff(head []byte) Format {
	switch {
	case bytes.HasPrefix(head, arrowFileMagic), bytes.HasPrefix(head, arrowStreamMagic):
		return FormatArrow
	case bytes.HasPrefix(head, parquetMagic):
		return FormatParquet
	}
	return FormatCSV
}

func newCSVReader(name string, br *bufio.Reader, opts ReadOptions) (array.RecordReader, error) {
	if head, _ := br.Peek(len(utf8BOM)); bytes.Equal(head, utf8BOM) {
		if _, err := br.Discard(len(utf8BOM)); err != nil {
			return nil, &tabular.DataError{File: name, Err: err}
		}
	}
	delim := opts.Delimiter
	if delim == 0 {
		delim = ','
	}
	br = bufio.NewReaderSize(newCSVGuard(br, delim), 64<<10)
	names, br, err := peekHeader(br, delim)
	var capped *csvCapError
	if errors.As(err, &capped) {
		return nil, capped.dataError()
	}
	if err != nil {
		return nil, &tabular.DataError{File: name, Line: 1, Err: err}
	}
	if len(names) > MaxColumns {
		return nil, &tabular.DataError{File: name, Line: 1, Err: fmt.Errorf("the header has %d columns, over the cap of %d (MaxColumns)", len(names), MaxColumns)}
	}
	fields := make([]arrow.Field, len(names))
	for i := range names {
		fields[i] = arrow.Field{Name: names[i], Type: arrow.BinaryTypes.String, Nullable: true}
	}
	return newCSVRecordReader(br, arrow.NewSchema(fields, nil), delim, csvBatchRows(opts.batchRows(), len(names)), csvNulls(opts)), nil
}

// peekHeader parses the header record without consuming it, so the Arrow
// reader can be given a schema with the right number of string columns.
// A header wider than br's buffer is peeked through a larger reader on top
// of br, which it returns for the rest of the input.
func peekHeader(br *bufio.Reader, delim rune) ([]string, *bufio.Reader, error) {
	for size := 4 << 10; ; size *= 4 {
		size = min(size, MaxHeaderBytes)
		if size > br.Size() {
			br = bufio.NewReaderSize(br, MaxHeaderBytes)
		}
		buf, err := br.Peek(size)
		whole := len(buf) < size // buf holds the rest of the input
		if whole && err != nil && !errors.Is(err, io.EOF) {
			return nil, br, err
		}
		if whole && len(bytes.TrimSpace(buf)) == 0 {
			return nil, br, ErrEmpty
		}
		cr := csv.NewReader(bytes.NewReader(buf))
		cr.Comma = delim
		names, perr := cr.Read()
		// The record is complete if it ends inside the window (a quoted
		// field may hold line breaks, so the first '\n' is not enough).
		if perr == nil && (whole || cr.InputOffset() < int64(len(buf))) {
			return names, br, nil
		}
		if !whole && size < MaxHeaderBytes {
			continue
		}
		if perr == nil {
			return nil, br, fmt.Errorf("the header line is longer than %d bytes", MaxHeaderBytes)
		}
		var pe *csv.ParseError
		if errors.As(perr, &pe) {
			return nil, br, fmt.Errorf("cannot read the header: %v", pe.Err)
		}
		return nil, br, fmt.Errorf("cannot read the header: %v", perr)
	}
}

// newArrowFileReader reads an Arrow IPC file that checkArrowFile passed.
// Buffers that are not compressed are slices of data, not copies.
func newArrowFileReader(data []byte, opts ReadOptions) (array.RecordReader, error) {
	var fr *ipc.FileReader
	err := decode(func() (err error) {
		fr, err = ipc.NewMappedFileReader(data, ipc.WithAllocator(opts.allocator()))
		return err
	})
	if err != nil {
		return nil, &tabular.DataError{Err: fmt.Errorf("not a readable Arrow IPC file: %v", err)}
	}
	if err := checkArrowTypes(fr.Schema()); err != nil {
		fr.Close()
		return nil, err
	}
	return &arrowFileReader{fr: fr, refs: 1}, nil
}

// newArrowStreamReader reads an Arrow IPC stream through a
// checkedMessageReader. ipc.NewReader would allocate whatever a message
// declares before reading it (and ignores the metadata size limit).
func newArrowStreamReader(r io.Reader, opts ReadOptions) (array.RecordReader, error) {
	mr := newCheckedMessageReader(r)
	var rdr *ipc.Reader
	err := decode(func() (err error) {
		rdr, err = ipc.NewReaderFromMessageReader(mr, ipc.WithAllocator(opts.allocator()))
		return err
	})
	if err != nil {
		if mr.err != nil {
			err = mr.err // the check's own words, without arrow-go's wrapping
		}
		return nil, &tabular.DataError{Err: err}
	}
	if err := checkArrowTypes(rdr.Schema()); err != nil {
		rdr.Release()
		return nil, err
	}
	return rdr, nil
}

// arrowFileReader adapts ipc.FileReader to array.RecordReader.
type arrowFileReader struct {
	fr   *ipc.FileReader
	next int
	cur  arrow.RecordBatch
	err  error
	refs int
}

func (r *arrowFileReader) Schema() *arrow.Schema { return r.fr.Schema() }

func (r *arrowFileReader) Next() bool {
	if r.cur != nil {
		r.cur.Release()
		r.cur = nil
	}
	if r.err != nil || r.next >= r.fr.NumRecords() {
		return false
	}
	rec, err := r.fr.RecordBatchAt(r.next)
	if err != nil {
		r.err = err
		return false
	}
	r.next++
	r.cur = rec
	return true
}

func (r *arrowFileReader) RecordBatch() arrow.RecordBatch { return r.cur }
func (r *arrowFileReader) Record() arrow.RecordBatch      { return r.cur }
func (r *arrowFileReader) Err() error                     { return r.err }
func (r *arrowFileReader) Retain()                        { r.refs++ }

func (r *arrowFileReader) Release() {
	r.refs--
	if r.refs > 0 {
		return
	}
	if r.cur != nil {
		r.cur.Release()
		r.cur = nil
	}
	r.fr.Close()
}

// newParquetReader reads a Parquet file. Page sizes are capped at
// MaxParquetPageBytes, and a compressed page at the file's size; column
// chunks are checked against the file's size by arrow-go.
func newParquetReader(data parquet.ReaderAtSeeker, opts ReadOptions) (array.RecordReader, error) {
	size, err := data.Seek(0, io.SeekEnd)
	if err != nil {
		return nil, &tabular.DataError{Err: err}
	}
	props := parquet.NewReaderProperties(opts.allocator())
	props.MaxCompressedPageSize = min(MaxParquetPageBytes, size)
	props.MaxUncompressedPageSize = MaxParquetPageBytes
	var rr pqarrow.RecordReader
	var pf *file.Reader
	err = decode(func() (err error) {
		pf, err = file.NewParquetReader(data, file.WithReadProps(props))
		if err != nil {
			return err
		}
		if n := pf.MetaData().Schema.NumColumns(); n > MaxColumns {
			return fmt.Errorf("the table has %d columns, over the cap of %d (MaxColumns)", n, MaxColumns)
		}
		fr, err := pqarrow.NewFileReader(pf, pqarrow.ArrowReadProperties{BatchSize: int64(opts.batchRows())}, opts.allocator())
		if err != nil {
			return err
		}
		schema, err := fr.Schema()
		if err != nil {
			return err
		}
		if err := checkArrowTypes(schema); err != nil {
			return err
		}
		rr, err = fr.GetRecordReader(context.Background(), nil, nil)
		return err
	})
	if err != nil {
		if pf != nil {
			pf.Close()
		}
		var de *tabular.DataError
		if errors.As(err, &de) {
			return nil, de
		}
		return nil, &tabular.DataError{Err: fmt.Errorf("not a readable Parquet file: %v", err)}
	}
	return &parquetReader{RecordReader: rr, pf: pf}, nil
}

// parquetReader closes the Parquet file with the record reader.
type parquetReader struct {
	pqarrow.RecordReader
	pf *file.Reader
}

func (r *parquetReader) Release() {
	r.RecordReader.Release()
	r.pf.Close()
}

// AllocationCapError is the error of a read that needed more Arrow memory
// than MaxReaderBytes allows.
type AllocationCapError struct {
	Size, Outstanding, Cap int64
}

func (e *AllocationCapError) Error() string {
	return fmt.Sprintf("reading needs %d more bytes of Arrow memory on top of %d, over the cap of %d (MaxReaderBytes); is a length in the file corrupt?",
		e.Size, e.Outstanding, e.Cap)
}

// cappedAllocator passes allocations to another allocator while the bytes
// outstanding stay within a cap, and panics with *AllocationCapError past
// it: Allocate cannot return an error, and arrow-go's readers recover
// their decoders' panics into errors (as decode does).
type cappedAllocator struct {
	memory.Allocator
	cap         int64
	outstanding atomic.Int64
}

func newCappedAllocator(mem memory.Allocator, cap int64) *cappedAllocator {
	if c, ok := mem.(*cappedAllocator); ok && c.cap <= cap {
		return c
	}
	return &cappedAllocator{Allocator: mem, cap: cap}
}

func (a *cappedAllocator) reserve(size int64) {
	if now := a.outstanding.Add(size); size > 0 && now > a.cap {
		a.outstanding.Add(-size)
		panic(&AllocationCapError{Size: size, Outstanding: now - size, Cap: a.cap})
	}
}

func (a *cappedAllocator) Allocate(size int) []byte {
	a.reserve(int64(size))
	return a.Allocator.Allocate(size)
}

func (a *cappedAllocator) Reallocate(size int, b []byte) []byte {
	a.reserve(int64(size - len(b)))
	return a.Allocator.Reallocate(size, b)
}

func (a *cappedAllocator) Free(b []byte) {
	a.outstanding.Add(-int64(len(b)))
	a.Allocator.Free(b)
}

// csvGuard passes CSV text through while following its quoting, so that a
// cell longer than MaxCellBytes or a record longer than MaxRecordBytes ends
// the read with a *csvCapError naming its line and column before the CSV
// parser has buffered it (it holds a whole record, which the Arrow reader
// then copies). It also turns a carriage return outside quotes into a line
// feed, dropping the line feed of a CRLF pair: files from old Mac software
// end lines with a lone CR, which the CSV parser would read as one line.
type csvGuard struct {
	r     io.Reader
	delim []byte // the delimiter's UTF-8 bytes
	err   error

	matched   int  // bytes of delim matched so far
	quoted    bool // inside a quoted cell
	quoteSeen bool // a quote inside a quoted cell: the end, or half of ""
	cellStart bool // at the start of a cell, where a quote opens one
	afterCR   bool // the last byte was a CR turned into a line feed
	cell      int  // bytes of the current cell's value
	record    int  // bytes of the current record
	line      int  // 1-based line of the current byte
	cellLine  int  // line where the current cell began
	column    int  // 1-based column of the current cell

	stops       [256]bool // bytes outside quotes that step must see
	quotedStops [256]bool // bytes inside quotes that step must see
	stepEvery   bool      // step every byte, with no runs (for tests)
}

func newCSVGuard(r io.Reader, delim rune) *csvGuard {
	g := &csvGuard{r: r, delim: utf8.AppendRune(nil, delim), cellStart: true, line: 1, cellLine: 1, column: 1}
	for _, c := range []byte{'"', '\r', '\n', g.delim[0]} {
		g.stops[c] = true
	}
	g.quotedStops['"'], g.quotedStops['\n'] = true, true
	return g
}

// csvCapError is a CSV cell or record over its cap.
type csvCapError struct {
	line, column int
	record       bool // the record, not the cell, is over the cap
}

func (e *csvCapError) Error() string {
	if e.record {
		return fmt.Sprintf("the row holds more than %d bytes, the cap (MaxRecordBytes); is a quote left open?", MaxRecordBytes)
	}
	return fmt.Sprintf("the cell holds more than %d bytes, the cap (MaxCellBytes); is a quote left open, or should the column be left out?", MaxCellBytes)
}

func (e *csvCapError) dataError() *tabular.DataError {
	de := &tabular.DataError{Line: e.line, Err: e}
	if !e.record {
		de.Column = e.column
	}
	return de
}

func (g *csvGuard) Read(p []byte) (int, error) {
	if g.err != nil {
		return 0, g.err
	}
	n, err := g.r.Read(p)
	w := 0 // bytes kept; a dropped LF and CR conversions happen in place
	for i := 0; i < n; i++ {
		c := p[i]
		if run := g.plainRun(p[i:n]); run > 0 {
			// Bytes that only lengthen the cell, taken at once.
			w += copy(p[w:], p[i:i+run])
			g.cell += run
			g.record += run
			g.cellStart = g.cellStart && g.quoted
			if capErr := g.check(); capErr != nil {
				g.err = capErr
				return w, capErr
			}
			i += run - 1
			continue
		}
		if g.afterCR {
			g.afterCR = false
			if c == '\n' {
				continue
			}
		}
		if c == '\r' && (!g.quoted || g.quoteSeen) {
			c, g.afterCR = '\n', true
		}
		p[w] = c
		w++
		if capErr := g.step(c); capErr != nil {
			g.err = capErr
			return w, capErr
		}
	}
	if err != nil {
		g.err = err
	}
	return w, err
}

// plainRun returns how many bytes at the start of p step would only count
// as part of the current cell: outside quotes, bytes other than a quote,
// a line break and the delimiter's first byte, with no delimiter half
// matched; inside quotes (no closing quote seen), bytes other than a quote
// and a line feed. It is 0 when the next byte needs step.
func (g *csvGuard) plainRun(p []byte) int {
	if g.afterCR || g.matched > 0 || (g.quoted && g.quoteSeen) || g.stepEvery {
		return 0
	}
	stops := &g.stops
	if g.quoted {
		stops = &g.quotedStops
	}
	n := 0
	for n < len(p) && !stops[p[n]] {
		n++
	}
	return n
}

// step follows one byte of the text.
func (g *csvGuard) step(c byte) error {
	g.record++
	switch {
	case g.quoted && !g.quoteSeen:
		if c == '"' {
			g.quoteSeen = true
			return g.check()
		}
		if c == '\n' {
			g.line++
		}
		g.cell++
		return g.check()
	case g.quoted && c == '"': // "" inside quotes
		g.quoteSeen = false
		g.cell++
		return g.check()
	case g.quoted: // after the closing quote
		g.quoted, g.quoteSeen = false, false
	case g.cellStart && c == '"':
		g.quoted, g.cellStart = true, false
		return g.check()
	}
	g.cellStart = false
	if c == '\n' {
		g.line++
		g.record, g.column = 0, 0
		g.endCell()
		return nil
	}
	if c == g.delim[g.matched] {
		g.matched++
		if g.matched == len(g.delim) {
			g.endCell()
		}
		return nil
	}
	g.matched = 0
	if c == g.delim[0] {
		g.matched = 1
		return nil
	}
	g.cell++
	return g.check()
}

func (g *csvGuard) endCell() {
	g.matched, g.cell, g.cellStart = 0, 0, true
	g.column++
	g.cellLine = g.line
}

func (g *csvGuard) check() error {
	switch {
	case g.cell > MaxCellBytes:
		return &csvCapError{line: g.cellLine, column: g.column}
	case g.record > MaxRecordBytes:
		return &csvCapError{line: g.cellLine, column: g.column, record: true}
	}
	return nil
}
