package ingest

import (
	"deltafit/ingest/tabular"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
)

// TableReader reads a table one record batch at a time, each batch a
// small tabular.Table of some of its columns, so that a table of any
// length is scored or encoded in bounded memory.
//
// It does not infer column kinds, which would need every row first: a
// column has the kind ReadOptions.Kinds declares, else the kind
// ReadOptions.Expected gives (a model's), else that of its Arrow type:
// numbers numeric, booleans boolean and text categorical (so every CSV
// column without a given kind is categorical). Cells are checked as
// Collect checks them, and errors name the row in the whole input.
type TableReader struct {
	name     string
	rr       array.RecordReader
	schema   *arrow.Schema // rr's, taken before reading ahead starts
	opts     ReadOptions
	all      []*columnBuilder // one per input column, for the names in errors
	builders []*columnBuilder // of the chosen columns
	index    []int            // their 0-based positions in the input
	table    *tabular.Table
	rec      arrow.RecordBatch // the current batch, retained
	rows     int               // rows read so far
	err      error
	done     bool

	// The input's batches are read ahead, in a goroutine of their own, so
	// that decoding the next batch overlaps the work on this one.
	batches chan arrow.RecordBatch
	stop    chan struct{}
	stopped bool
}

// readAhead is how many batches a TableReader reads ahead of the one in
// use.
const readAhead = 2

// NewTableReader reads the named columns of rr's batches; names the input
// does not have are left out, for the caller to report as its own errors
// do. The input's column names are checked as Collect checks them. It
// reads rr ahead in a goroutine of its own from now on, so rr is the
// TableReader's until Close; the caller then releases rr.
func NewTableReader(name string, rr array.RecordReader, columns []string, opts ReadOptions) (*TableReader, error) {
	all, err := newColumnBuilders(name, rr.Schema(), opts)
	if err != nil {
		return nil, err
	}
	for _, b := range all {
		// An undeclared text column is read as categorical here (see
		// Next), so only declared numeric columns are read as numbers.
		kind, given, _ := b.kindOf(opts)
		b.textual = !given || kind != tabular.Numeric
	}
	r := &TableReader{name: name, rr: rr, opts: opts, all: all, schema: rr.Schema(),
		batches: make(chan arrow.RecordBatch, readAhead), stop: make(chan struct{})}
	position := make(map[string]int, len(all)) // a column's first position, looked up once per name asked for
	for i := len(all) - 1; i >= 0; i-- {
		position[all[i].name] = i
	}
	for _, c := range columns {
		if i, ok := position[c]; ok {
			r.builders = append(r.builders, all[i])
			r.index = append(r.index, i)
		}
	}
	go r.readAhead()
	return r, nil
}

// readAhead reads the input's batches into r.batches until the input ends
// or Close is called; Err is read only once r.batches is closed.
func (r *TableReader) readAhead() {
	defer close(r.batches)
	for r.rr.Next() {
		rec := r.rr.RecordBatch()
		rec.Retain()
		select {
		case r.batches <- rec:
		case <-r.stop:
			rec.Release()
			return
		}
	}
}

// Close stops reading and releases the batches held; the caller then
// releases the array.RecordReader. It may be called more than once.
func (r *TableReader) Close() {
	if !r.stopped {
		r.stopped = true
		close(r.stop)
	}
	for rec := range r.batches {
		rec.Release()
	}
	r.releaseBatch()
	r.done, r.table = true, nil
}

func (r *TableReader) releaseBatch() {
	if r.rec != nil {
		r.rec.Release()
		r.rec = nil
	}
}

// Schema is the input's schema: every column, chosen or not.
func (r *TableReader) Schema() *arrow.Schema { return r.schema }

// Next reads the next batch and reports whether there is one. After it
// returns false, Err says why.
func (r *TableReader) Next() bool {
	if r.err != nil || r.done {
		return false
	}
	r.releaseBatch()
	rec, ok := <-r.batches
	if !ok {
		r.finish()
		return false
	}
	r.rec = rec
	n := int(rec.NumRows())
	t := &tabular.Table{Name: r.name, Rows: n, Columns: make([]*tabular.Column, len(r.builders)), RowNumbers: make([]int, n), ColumnNumbers: make([]int, len(r.builders))}
	for k, i := range r.index {
		t.ColumnNumbers[k] = i + 1
	}
	for i := range t.RowNumbers {
		t.RowNumbers[i] = r.rows + i + 1
	}
	for k, b := range r.builders {
		b.reset()
		if err := b.append(rec.Column(r.index[k]), r.rows); err != nil {
			err.File = r.name
			r.err = err
			return false
		}
		kind, given, reason := b.kindOf(r.opts)
		if !given && !b.numeric && !b.boolean {
			kind, given = tabular.Categorical, true
		}
		col, err := b.finish(kind, given, reason)
		if err != nil {
			err.File = r.name
			r.err = err
			return false
		}
		col.LabelText = b.labelText(r.opts)
		t.Columns[k] = col
	}
	r.rows += n
	r.table = t
	return true
}

// finish ends the input: it takes the reader's error, refuses an input of
// no rows and reports underflows to ReadOptions.Warn.
func (r *TableReader) finish() {
	r.done, r.table = true, nil
	if err := r.rr.Err(); err != nil {
		de := readError(r.name, r.rows, err)
		if de.Column > 0 && de.Column <= len(r.all) && de.Name == "" {
			de.Name = r.all[de.Column-1].name
		}
		r.err = de
		return
	}
	if r.rows == 0 {
		r.err = &tabular.DataError{File: r.name, Err: ErrNoRows}
		return
	}
	for _, b := range r.builders {
		if w := b.underflowWarning(); w != nil && r.opts.Warn != nil {
			w.File = r.name
			r.opts.Warn(w)
		}
	}
}

// Table returns the current batch: the chosen columns found in the input,
// in the order asked for, with the rows' numbers and the columns'
// positions in the input (Table.RowNumbers, Table.ColumnNumbers). It is valid until the next call to Next.
func (r *TableReader) Table() *tabular.Table { return r.table }

// RecordBatch returns the current batch as the input holds it, every
// column, for columns passed through unchanged. It is valid until the next
// call to Next.
func (r *TableReader) RecordBatch() arrow.RecordBatch { return r.rec }

// Rows is the number of rows read so far.
func (r *TableReader) Rows() int { return r.rows }

// Err returns the error that ended the reading, or nil at the end of a
// good input. An input without rows is an error wrapping ErrNoRows.
func (r *TableReader) Err() error {
	if r.err == nil {
		return nil
	}
	return r.err
}

// InferKinds reads the first rows rows of rr (at least one batch) and
// returns the kind Collect infers for each column from them, for a
// TableReader, which does not infer kinds: kinds opts.Kinds declares are
// kept, and the target (opts.Target) is left out, for TableReader to read
// as class labels. A later cell that does not fit the kind inferred is
// then an error naming its row and column. The caller releases rr.
func InferKinds(name string, rr array.RecordReader, rows int, opts ReadOptions) (map[string]tabular.Kind, error) {
	t, err := Collect(name, &headReader{RecordReader: rr, rows: rows}, opts)
	if err != nil {
		return nil, err
	}
	kinds := make(map[string]tabular.Kind, len(t.Columns))
	for _, c := range t.Columns {
		if _, declared := opts.Kinds[c.Name]; declared || c.Name != opts.Target {
			kinds[c.Name] = c.Kind
		}
	}
	return kinds, nil
}

// headReader reads the batches of a RecordReader until they hold rows
// rows or more.
type headReader struct {
	array.RecordReader
	rows, read int
}

func (h *headReader) Next() bool {
	if h.read >= h.rows || !h.RecordReader.Next() {
		return false
	}
	h.read += int(h.RecordBatch().NumRows())
	return true
}
