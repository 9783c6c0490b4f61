package ingest

import (
	"bufio"
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"

	"deltafit/ingest/tabular"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	arrowcsv "github.com/apache/arrow-go/v18/arrow/csv"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
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
	Allocator memory.Allocator
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
// the file than a value worth a category of its own.
const MaxCellBytes = 1 << 20

// MaxArrowBodyBytes caps one record batch body of an Arrow IPC stream. The
// body is allocated from its declared length before it is read, so without
// a cap a few bytes could claim terabytes; write larger data in smaller
// batches.
const MaxArrowBodyBytes = 1 << 30

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
func NewRecordReader(name string, r io.Reader, opts ReadOptions) (_ array.RecordReader, err error) {
	defer recoverMalformed(name, &err)
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
			return newArrowFileReader(name, data, opts)
		}
		stream, err := checkArrowStream(br)
		if err != nil {
			return nil, &tabular.DataError{File: name, Err: fmt.Errorf("not a readable Arrow IPC stream: %v", err)}
		}
		// ipc.NewReader ignores the metadata size limit, so a stream that
		// does not start with a schema message (say, a CSV read with
		// Format "arrow") would make it allocate whatever its first four
		// bytes claim. The message reader applies arrow's 64 MiB limit;
		// record bodies, allocated before they are read, are capped at
		// MaxArrowBodyBytes.
		mr := ipc.NewMessageReader(stream, ipc.WithAllocator(opts.allocator()), ipc.WithBodySizeLimit(MaxArrowBodyBytes))
		rdr, err := ipc.NewReaderFromMessageReader(mr, ipc.WithAllocator(opts.allocator()))
		if err != nil {
			return nil, &tabular.DataError{File: name, Err: fmt.Errorf("not a readable Arrow IPC stream: %v", err)}
		}
		return rdr, nil
	case FormatParquet:
		data, err := io.ReadAll(br)
		if err != nil {
			return nil, &tabular.DataError{File: name, Err: err}
		}
		return newParquetReader(name, data, opts)
	}
	return nil, &tabular.DataError{File: name, Err: fmt.Errorf("%w: format %q", ErrUnsupported, format)}
}

// recoverMalformed turns a panic inside the Arrow and Parquet decoders,
// which some malformed files cause (flatbuffers reads past a short
// buffer), into an error naming the file. Deferred by the functions that
// call into them with untrusted bytes.
func recoverMalformed(name string, err *error) {
	if p := recover(); p != nil {
		*err = &tabular.DataError{File: name, Err: fmt.Errorf("%w: the file is malformed (%v); is it truncated or of another format?", ErrUnsupported, p)}
	}
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
	names, br, err := peekHeader(br, delim)
	if err != nil {
		return nil, &tabular.DataError{File: name, Line: 1, Err: err}
	}
	fields := make([]arrow.Field, len(names))
	for i := range names {
		fields[i] = arrow.Field{Name: names[i], Type: arrow.BinaryTypes.String, Nullable: true}
	}
	rdr := arrowcsv.NewReader(br, arrow.NewSchema(fields, nil),
		arrowcsv.WithHeader(true),
		arrowcsv.WithComma(delim),
		arrowcsv.WithChunk(opts.batchRows()),
		arrowcsv.WithNullReader(true, NullValues...),
		arrowcsv.WithAllocator(opts.allocator()))
	return rdr, nil
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

func newArrowFileReader(name string, data []byte, opts ReadOptions) (array.RecordReader, error) {
	fr, err := ipc.NewFileReader(bytes.NewReader(data), ipc.WithAllocator(opts.allocator()))
	if err != nil {
		return nil, &tabular.DataError{File: name, Err: fmt.Errorf("not a readable Arrow IPC file: %v", err)}
	}
	return &arrowFileReader{fr: fr, refs: 1}, nil
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

func newParquetReader(name string, data []byte, opts ReadOptions) (array.RecordReader, error) {
	pf, err := file.NewParquetReader(bytes.NewReader(data))
	if err != nil {
		return nil, &tabular.DataError{File: name, Err: fmt.Errorf("not a readable Parquet file: %v", err)}
	}
	fr, err := pqarrow.NewFileReader(pf, pqarrow.ArrowReadProperties{BatchSize: int64(opts.batchRows())}, opts.allocator())
	if err != nil {
		pf.Close()
		return nil, &tabular.DataError{File: name, Err: fmt.Errorf("not a readable Parquet file: %v", err)}
	}
	rr, err := fr.GetRecordReader(context.Background(), nil, nil)
	if err != nil {
		pf.Close()
		return nil, &tabular.DataError{File: name, Err: fmt.Errorf("not a readable Parquet file: %v", err)}
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
