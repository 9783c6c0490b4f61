package pipeline

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"slices"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"

	"deltafit/ingest"
	"deltafit/ingest/tabular"
)

// DefaultBlockRows is the rows per block: the record batch size asked of
// the readers, and the unit of every partial sum.
const DefaultBlockRows = 1 << 16

// block is a run of consecutive rows of one input file, read into a table
// of typed columns. Blocks are the unit of work of every pass: each pass
// computes one partial result per block, and the partials are combined in
// block order, whatever runner, worker or bundle computed them.
type block struct {
	// ID orders blocks: the file's key, then the block's index in the file.
	ID string
	// File is the file's key (its path below the root of the pattern that
	// matched it); Path is where it was read from.
	File, Path string
	Index      int
	// Table holds the rows kept (those with a target value, and with
	// --missing drop those with no missing cell in a used column);
	// Table.RowNumbers are their 1-based row numbers in the file.
	Table *tabular.Table
	// Read is the rows read, kept or not.
	Read int
	// NoTarget and Dropped count the rows left out for want of a target
	// value and by --missing drop; FirstNoTarget and FirstDropped are the
	// row numbers of the first of each, 0 for none.
	NoTarget, Dropped           int
	FirstNoTarget, FirstDropped int
}

// blockID is the sort key of block index of the file with key file.
func blockID(file string, index int) string {
	return fmt.Sprintf("%s\x00%012d", file, index)
}

// readBlocks reads the file at path (whose key is file) block by block
// and calls fn with each block. kinds declares column kinds (nil infers
// them from each block's values); the other reading options come from c.
// A data error names the file, with row numbers counted from the file's
// first row.
func readBlocks(ctx context.Context, c *Config, file, path string, r io.Reader, kinds map[string]tabular.Kind, fn func(*block) error) error {
	opts, err := c.readOptions()
	if err != nil {
		return err
	}
	opts.Target = c.Target
	if kinds != nil {
		opts.Kinds = kinds
	}
	name := path
	rr, err := ingest.NewRecordReader(name, r, opts)
	if err != nil {
		return err
	}
	defer rr.Release()
	offset := 0 // rows read before the current block
	for index := 0; rr.Next(); index++ {
		if err := ctx.Err(); err != nil {
			return err
		}
		rec := rr.RecordBatch()
		one, err := array.NewRecordReader(rr.Schema(), []arrow.RecordBatch{rec})
		if err != nil {
			return fmt.Errorf("%s: %w", tabular.DisplayName(name), err)
		}
		t, err := ingest.Collect(name, one, opts)
		one.Release()
		if err != nil {
			return shiftRows(err, offset)
		}
		b := &block{ID: blockID(file, index), File: file, Path: path, Index: index, Read: t.Rows}
		if err := c.keepRows(b, t, offset); err != nil {
			return err
		}
		offset += b.Read
		if err := fn(b); err != nil {
			return err
		}
	}
	if err := rr.Err(); err != nil {
		// Collect places a reader's error at the row after the last one
		// read, with the reader's own wording; it reads no batch here.
		one := &failedReader{schema: rr.Schema(), err: err}
		_, err := ingest.Collect(name, one, opts)
		return shiftRows(err, offset)
	}
	if offset == 0 {
		return &tabular.DataError{File: name, Err: ingest.ErrNoRows}
	}
	return nil
}

// keepRows sets b.Table to the rows of t (the block that follows offset
// rows of its file) that can be learned from, numbered in the file.
func (c *Config) keepRows(b *block, t *tabular.Table, offset int) error {
	t.RowNumbers = make([]int, t.Rows)
	for i := range t.RowNumbers {
		t.RowNumbers[i] = offset + i + 1
	}
	target := t.Column(c.Target)
	if target == nil {
		// The plan pass reports the missing target once, with the columns.
		b.Table = t
		return nil
	}
	keep := func(i int) bool {
		if target.IsMissing(i) {
			b.NoTarget++
			if b.FirstNoTarget == 0 {
				b.FirstNoTarget = t.RowNumbers[i]
			}
			return false
		}
		if !c.DropMissing {
			return true
		}
		for _, col := range t.Columns {
			if col != target && col.IsMissing(i) && !slices.Contains(c.Ignore, col.Name) {
				b.Dropped++
				if b.FirstDropped == 0 {
					b.FirstDropped = t.RowNumbers[i]
				}
				return false
			}
		}
		return true
	}
	b.Table, _ = t.DropRows(keep)
	return nil
}

// shiftRows moves the row of a data error found in a block that follows
// offset rows of its file to its row in the file.
func shiftRows(err error, offset int) error {
	var de *tabular.DataError
	if errors.As(err, &de) && de.Row > 0 {
		de.Row += offset
	}
	return err
}

// failedReader is a record reader that holds no batch, only an error.
type failedReader struct {
	schema *arrow.Schema
	err    error
}

func (r *failedReader) Retain()                        {}
func (r *failedReader) Release()                       {}
func (r *failedReader) Schema() *arrow.Schema          { return r.schema }
func (r *failedReader) Next() bool                     { return false }
func (r *failedReader) RecordBatch() arrow.RecordBatch { return nil }
func (r *failedReader) Record() arrow.RecordBatch      { return nil }
func (r *failedReader) Err() error                     { return r.err }

// hashFile returns the hex sha256 of everything r holds.
func hashFile(r io.Reader) (string, error) {
	h := sha256.New()
	if _, err := io.Copy(h, r); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
