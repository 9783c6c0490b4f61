package ingest

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"slices"
	"sync/atomic"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/bitutil"
	"github.com/apache/arrow-go/v18/arrow/memory"
)

// maxBatchCells bounds the cells of one CSV record batch, so that a wide
// table gets fewer rows per batch.
const maxBatchCells = 1 << 19

// maxBatchBytes ends a CSV record batch early once its cells hold this
// many bytes: a batch's string offsets are 32-bit.
const maxBatchBytes = 64 << 20

// csvBatchRows is the number of rows per batch for a table of the given
// width: rows, or fewer so that a batch holds at most maxBatchCells cells
// (at least one row).
func csvBatchRows(rows, columns int) int {
	return max(1, min(rows, maxBatchCells/max(columns, 1)))
}

// csvRecordReader reads CSV text into record batches of string columns.
//
// All the columns of a batch share three buffers: the cells' bytes column
// after column, their offsets and, when a cell is missing, a validity
// bitmap; column j is the slice of rows [j·n, (j+1)·n) of them. A batch so
// costs a few hundred bytes per column besides its cells, whatever the
// width of the table (arrow-go's CSV reader builds three buffers for every
// column of every batch, about 1.5 KB each).
//
// It reads as arrow-go's CSV reader does with a header and a fixed schema
// of nullable strings: encoding/csv with the delimiter, every record as
// wide as the header, the cells in nulls read as missing. An error after
// some rows of a batch still gives those rows, then ends the read.
type csvRecordReader struct {
	refs   atomic.Int64
	r      *csv.Reader
	schema *arrow.Schema
	rows   int                 // rows per batch
	nulls  map[string]struct{} // cell texts read as missing
	header bool                // the header record has been read
	cur    arrow.RecordBatch
	err    error
	done   bool

	cells []string // the batch's cells, row after row, reused
}

func newCSVRecordReader(r io.Reader, schema *arrow.Schema, delim rune, rows int, nulls []string) *csvRecordReader {
	cr := csv.NewReader(r)
	cr.Comma = delim
	cr.ReuseRecord = true
	rr := &csvRecordReader{r: cr, schema: schema, rows: rows, nulls: map[string]struct{}{}}
	for _, s := range nulls {
		rr.nulls[s] = struct{}{}
	}
	rr.refs.Add(1)
	return rr
}

func (r *csvRecordReader) Schema() *arrow.Schema          { return r.schema }
func (r *csvRecordReader) RecordBatch() arrow.RecordBatch { return r.cur }

// Record is RecordBatch, for array.RecordReader.
//
// Deprecated: use RecordBatch.
func (r *csvRecordReader) Record() arrow.RecordBatch { return r.cur }
func (r *csvRecordReader) Err() error                { return r.err }
func (r *csvRecordReader) Retain()                   { r.refs.Add(1) }

func (r *csvRecordReader) Release() {
	if r.refs.Add(-1) == 0 && r.cur != nil {
		r.cur.Release()
		r.cur = nil
	}
}

// Next reads the next batch and reports whether there is one.
func (r *csvRecordReader) Next() bool {
	if r.cur != nil {
		r.cur.Release()
		r.cur = nil
	}
	if r.err != nil || r.done {
		return false
	}
	if !r.header {
		r.header = true
		if _, err := r.r.Read(); err != nil {
			r.err = fmt.Errorf("ingest: could not read the header: %w", err)
			return false
		}
	}
	width := len(r.schema.Fields())
	r.cells = r.cells[:0]
	n, size := 0, 0
	for n < r.rows && size < maxBatchBytes {
		record, err := r.r.Read()
		if err != nil {
			if !errors.Is(err, io.EOF) {
				r.err = err
			}
			r.done = true
			break
		}
		if len(record) != width { // encoding/csv already refuses this
			r.err, r.done = errors.New("ingest: a record has a different number of fields than the header"), true
			break
		}
		for _, cell := range record {
			size += len(cell)
		}
		r.cells = append(r.cells, record...)
		n++
	}
	if n == 0 {
		return false
	}
	r.cur = r.batch(n, width, size)
	clear(r.cells) // let the records' text go with the batch
	return true
}

// batch makes a record batch of the n rows in r.cells, of width columns
// holding size bytes.
func (r *csvRecordReader) batch(n, width, size int) arrow.RecordBatch {
	values := make([]byte, 0, size)
	offsets := make([]int32, 0, n*width+1)
	offsets = append(offsets, 0)
	var validity []byte // nil while no cell is missing
	nullCounts := make([]int, width)
	for j := range width {
		for i := range n {
			cell := r.cells[i*width+j]
			if _, missing := r.nulls[cell]; missing {
				if validity == nil {
					validity = make([]byte, bitutil.BytesForBits(int64(n*width)))
					bitutil.SetBitsTo(validity, 0, int64(len(offsets)-1), true)
				}
				nullCounts[j]++
			} else {
				if validity != nil {
					bitutil.SetBit(validity, len(offsets)-1)
				}
				values = append(values, cell...)
			}
			offsets = append(offsets, int32(len(values)))
		}
	}
	var validityBuf *memory.Buffer
	if validity != nil {
		validityBuf = memory.NewBufferBytes(validity)
	}
	offsetsBuf := memory.NewBufferBytes(arrow.Int32Traits.CastToBytes(offsets))
	valuesBuf := memory.NewBufferBytes(values)
	columns := make([]arrow.Array, width)
	for j := range columns {
		data := array.NewData(arrow.BinaryTypes.String, n, []*memory.Buffer{nullBufferOf(validityBuf, nullCounts[j]), offsetsBuf, valuesBuf}, nil, nullCounts[j], j*n)
		columns[j] = array.NewStringData(data)
		data.Release()
	}
	rec := array.NewRecordBatch(r.schema, columns, int64(n))
	for _, c := range columns {
		c.Release()
	}
	return rec
}

// nullBufferOf is a column's validity buffer: none for a column of no
// missing cells.
func nullBufferOf(validity *memory.Buffer, nulls int) *memory.Buffer {
	if nulls == 0 {
		return nil
	}
	return validity
}

// csvNulls are the cell texts read as missing: NullValues and the
// caller's.
func csvNulls(opts ReadOptions) []string {
	return append(slices.Clone(NullValues), opts.Missing...)
}
