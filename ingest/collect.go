package ingest

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"

	"deltafit/ingest/tabular"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
)

// ReadTable reads a whole table from r: NewRecordReader followed by Collect.
func ReadTable(name string, r io.Reader, opts ReadOptions) (*tabular.Table, error) {
	rr, err := NewRecordReader(name, r, opts)
	if err != nil {
		return nil, err
	}
	defer rr.Release()
	return Collect(name, rr, opts)
}

// Collect reads every batch of rr into a tabular.Table, inferring column kinds from
// the values (opts.Kinds overrides them). Text columns whose values all parse
// as numbers are numeric; all true/false are boolean; the rest categorical.
// A column that is mostly numbers with a stray word is an error naming the
// cell, not a silent switch to categorical.
func Collect(name string, rr array.RecordReader, opts ReadOptions) (_ *tabular.Table, err error) {
	defer recoverMalformed(name, &err)
	schema := rr.Schema()
	builders := make([]*columnBuilder, schema.NumFields())
	seen := make(map[string]int, len(builders))
	for i, f := range schema.Fields() {
		if f.Name == "" {
			return nil, &tabular.DataError{File: name, Line: 1, Column: i + 1, Err: errors.New("the column has no name; give every column a name in the header")}
		}
		if !utf8.ValidString(f.Name) {
			// A model file stores names as JSON, which would replace the
			// bad bytes, and the name would no longer match this column.
			return nil, &tabular.DataError{File: name, Line: 1, Column: i + 1, Err: errors.New("the column name is not valid UTF-8 text; re-save the file as UTF-8")}
		}
		if j, dup := seen[f.Name]; dup {
			return nil, &tabular.DataError{File: name, Line: 1, Column: i + 1, Name: f.Name,
				Err: fmt.Errorf("the column name is also used by column %d; column names must be unique", j+1)}
		}
		seen[f.Name] = i
		builders[i] = &columnBuilder{name: f.Name, index: i + 1}
	}
	for col := range opts.Kinds {
		if _, ok := seen[col]; !ok {
			return nil, &tabular.DataError{File: name, Name: col, Err: fmt.Errorf("a kind is given for this column but the input has %w", ErrNoColumn)}
		}
	}
	rows := 0
	for rr.Next() {
		rec := rr.RecordBatch()
		for i, b := range builders {
			if err := b.append(rec.Column(i), rows); err != nil {
				err.File = name
				return nil, err
			}
		}
		rows += int(rec.NumRows())
	}
	if err := rr.Err(); err != nil {
		return nil, readError(name, rows, err)
	}
	if rows == 0 {
		return nil, &tabular.DataError{File: name, Err: ErrNoRows}
	}
	t := &tabular.Table{Name: name, Rows: rows, Columns: make([]*tabular.Column, len(builders))}
	for i, b := range builders {
		reason := "declared"
		kind, declared := opts.Kinds[b.name]
		if !declared {
			reason = "the model reads as"
			kind, declared = opts.Expected[b.name]
		}
		col, err := b.finish(kind, declared, reason)
		if err != nil {
			err.File = name
			return nil, err
		}
		t.Columns[i] = col
	}
	return t, nil
}

// readError places a reader's error at the row that follows the last one read.
func readError(name string, rows int, err error) *tabular.DataError {
	de := &tabular.DataError{File: name, Row: rows + 1, Err: err}
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		de.Line = pe.Line
		switch {
		case errors.Is(pe.Err, csv.ErrFieldCount):
			de.Err = errors.New("the row has a different number of fields than the header; check the delimiter and quoting")
		case errors.Is(pe.Err, csv.ErrQuote), errors.Is(pe.Err, csv.ErrBareQuote):
			de.Err = fmt.Errorf("%v; close the quote, or double a quote inside a quoted field", pe.Err)
		default:
			de.Err = pe.Err
		}
		return de
	}
	if errors.Is(err, io.ErrUnexpectedEOF) {
		de.Err = errors.New("the input ends in the middle of a record; is the file truncated?")
	}
	return de
}

// columnBuilder gathers one column's cells across batches.
type columnBuilder struct {
	name    string
	index   int // 1-based
	numeric bool
	boolean bool
	text    []string
	numbers []float64
	missing []bool
	any     bool // a cell has been appended, fixing the storage type
}

func (b *columnBuilder) fail(row int, err error) *tabular.DataError {
	return &tabular.DataError{Row: row, Column: b.index, Name: b.name, Err: err}
}

func (b *columnBuilder) setStorage(numeric, boolean bool) *tabular.DataError {
	if b.any && (b.numeric != numeric || b.boolean != boolean) {
		return b.fail(0, errors.New("the column changes type between record batches"))
	}
	b.any, b.numeric, b.boolean = true, numeric, boolean
	return nil
}

func (b *columnBuilder) append(arr arrow.Array, rowBase int) *tabular.DataError {
	text, isText := textGetter(arr)
	number, isNumber := numberGetter(arr)
	_, isBool := arr.(*array.Boolean)
	if !isText && !isNumber {
		return b.fail(0, fmt.Errorf("%w: Arrow type %s; convert the column to numbers, text or booleans", ErrUnsupported, arr.DataType()))
	}
	if err := b.setStorage(isNumber && !isBool, isBool); err != nil {
		return err
	}
	for i := range arr.Len() {
		row, missing := rowBase+i+1, arr.IsNull(i)
		b.missing = append(b.missing, missing)
		if isText {
			v := ""
			if !missing {
				v = text(i)
			}
			if err := b.appendText(v, row); err != nil {
				return err
			}
			continue
		}
		v := 0.0
		if !missing {
			v = number(i)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return b.fail(row, fmt.Errorf("%v is not a finite number; store a null for a missing value", v))
			}
		}
		b.numbers = append(b.numbers, v)
	}
	return nil
}

// textGetter reads the cells of a text column: strings, large strings or
// a dictionary of them.
func textGetter(arr arrow.Array) (func(int) string, bool) {
	switch a := arr.(type) {
	case *array.String:
		return a.Value, true
	case *array.LargeString:
		return a.Value, true
	case *array.Dictionary:
		return a.ValueStr, true
	}
	return nil, false
}

func (b *columnBuilder) appendText(v string, row int) *tabular.DataError {
	if len(v) > MaxCellBytes {
		return b.fail(row, fmt.Errorf("the cell holds %d bytes, over the cap of %d; is a quote left open, or should the column be left out?", len(v), MaxCellBytes))
	}
	if !utf8.ValidString(v) {
		return b.fail(row, errors.New("the cell is not valid UTF-8 text; re-save the file as UTF-8"))
	}
	b.text = append(b.text, v)
	return nil
}

// numberGetter reads the cells of a numeric or boolean column as float64
// (booleans as 0 and 1).
func numberGetter(arr arrow.Array) (func(int) float64, bool) {
	switch a := arr.(type) {
	case *array.Boolean:
		return func(i int) float64 {
			if a.Value(i) {
				return 1
			}
			return 0
		}, true
	case *array.Float64:
		return a.Value, true
	case *array.Float32:
		return func(i int) float64 { return widen32(a.Value(i)) }, true
	case *array.Float16:
		return func(i int) float64 { return widen32(a.Value(i).Float32()) }, true
	case *array.Int64:
		return func(i int) float64 { return float64(a.Value(i)) }, true
	case *array.Int32:
		return func(i int) float64 { return float64(a.Value(i)) }, true
	case *array.Int16:
		return func(i int) float64 { return float64(a.Value(i)) }, true
	case *array.Int8:
		return func(i int) float64 { return float64(a.Value(i)) }, true
	case *array.Uint64:
		return func(i int) float64 { return float64(a.Value(i)) }, true
	case *array.Uint32:
		return func(i int) float64 { return float64(a.Value(i)) }, true
	case *array.Uint16:
		return func(i int) float64 { return float64(a.Value(i)) }, true
	case *array.Uint8:
		return func(i int) float64 { return float64(a.Value(i)) }, true
	}
	return nil, false
}

// widen32 turns a float32 into the float64 nearest its shortest decimal
// form: 5.1 stored as float32 reads as 5.1, as it would from CSV, rather
// than as 5.099999904632568, so cuts fitted on one format apply to the
// other.
func widen32(v float32) float64 {
	x, _ := strconv.ParseFloat(strconv.FormatFloat(float64(v), 'g', -1, 32), 64)
	return x
}

// finish turns the gathered cells into a tabular.Column of the declared or inferred
// kind; reason says why a declared kind applies, for messages ("declared").
func (b *columnBuilder) finish(kind tabular.Kind, declared bool, reason string) (*tabular.Column, *tabular.DataError) {
	col := &tabular.Column{Name: b.name}
	if anyTrue(b.missing) {
		col.Missing = b.missing
	}
	switch {
	case b.numeric || b.boolean:
		col.Kind = tabular.Numeric
		if b.boolean {
			col.Kind = tabular.Boolean
		}
		col.Numbers = b.numbers
		if declared && kind != col.Kind {
			if kind != tabular.Categorical {
				return nil, b.fail(0, fmt.Errorf("a %s Arrow column cannot be read as %s (%s %s)", col.Kind, kind, reason, kind))
			}
			col.Text = make([]string, len(b.numbers))
			for i := range b.numbers {
				col.Text[i] = col.Value(i)
			}
			col.Kind, col.Numbers = tabular.Categorical, nil
		}
		return col, nil
	}
	if !declared {
		kind = b.inferKind()
	}
	col.Kind = kind
	switch kind {
	case tabular.Categorical:
		col.Text = b.text
		return col, nil
	case tabular.Boolean:
		col.Numbers = make([]float64, len(b.text))
		for i, v := range b.text {
			if col.IsMissing(i) {
				continue
			}
			t, ok := parseBool(v)
			if !ok {
				return nil, b.fail(i+1, fmt.Errorf("%q is not true or false, in a column %s boolean", v, reason))
			}
			if t {
				col.Numbers[i] = 1
			}
		}
		return col, nil
	}
	col.Numbers = make([]float64, len(b.text))
	numbers := b.numberCount()
	for i, v := range b.text {
		if col.IsMissing(i) {
			continue
		}
		x, err := parseNumber(v)
		switch {
		case errors.Is(err, errNotNumber) && declared:
			return nil, b.fail(i+1, fmt.Errorf("%w in a column %s numeric; fix the cell, or leave it empty or write NA if it is missing", err, reason))
		case errors.Is(err, errNotNumber):
			return nil, b.fail(i+1, fmt.Errorf("%w, though %d of the column's %d values are; fix the cell, leave it empty or write NA if it is missing, or declare the column categorical",
				err, numbers, len(b.text)-countTrue(b.missing)))
		case err != nil:
			return nil, b.fail(i+1, err)
		}
		col.Numbers[i] = x
	}
	return col, nil
}

// inferKind looks at every present value. A column that is mostly numbers
// is inferred numeric so that a stray word is reported rather than hidden.
func (b *columnBuilder) inferKind() tabular.Kind {
	present, bools := 0, 0
	for i, v := range b.text {
		if b.missing[i] {
			continue
		}
		present++
		if _, ok := parseBool(v); ok {
			bools++
		}
	}
	switch {
	case present == 0:
		return tabular.Categorical
	case bools == present:
		return tabular.Boolean
	case 2*b.numberCount() > present:
		return tabular.Numeric
	}
	return tabular.Categorical
}

// numberCount counts present cells that read as numbers, finite or not.
func (b *columnBuilder) numberCount() int {
	n := 0
	for i, v := range b.text {
		if b.missing[i] {
			continue
		}
		if _, err := readFloat(v); err == nil || errors.Is(err, strconv.ErrRange) {
			n++
		}
	}
	return n
}

// readFloat reads decimal notation only: strconv.ParseFloat also takes hex
// floats ("0x1p-2") and digit separators ("1_000"), which in a table are
// far more likely codes than numbers.
func readFloat(v string) (float64, error) {
	v = strings.TrimSpace(v)
	if strings.ContainsAny(v, "xX_") {
		return 0, strconv.ErrSyntax
	}
	return strconv.ParseFloat(v, 64)
}

// errNotNumber marks text that does not read as a number at all.
var errNotNumber = errors.New("is not a number")

// parseNumber reads a finite float64. NaN, infinities and out-of-range
// values are errors: a missing value is written as an empty cell or NA.
func parseNumber(v string) (float64, error) {
	x, err := readFloat(v)
	switch {
	case errors.Is(err, strconv.ErrRange):
		return 0, fmt.Errorf("%q is outside the range of a 64-bit float", v)
	case err != nil:
		return 0, fmt.Errorf("%q %w", v, errNotNumber)
	case math.IsNaN(x) || math.IsInf(x, 0):
		return 0, fmt.Errorf("%q is not a finite number; leave the cell empty or write NA if it is missing", v)
	}
	return x, nil
}

func parseBool(v string) (bool, bool) {
	switch strings.ToLower(strings.TrimSpace(v)) {
	case "true":
		return true, true
	case "false":
		return false, true
	}
	return false, false
}

func anyTrue(bs []bool) bool { return countTrue(bs) > 0 }

func countTrue(bs []bool) int {
	n := 0
	for _, b := range bs {
		if b {
			n++
		}
	}
	return n
}
