package ingest

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"unicode"
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
func Collect(name string, rr array.RecordReader, opts ReadOptions) (*tabular.Table, error) {
	builders, err := newColumnBuilders(name, rr.Schema(), opts)
	if err != nil {
		return nil, err
	}
	for _, b := range builders {
		kind, given, _ := b.kindOf(opts)
		b.textual, b.copyText = given && kind != tabular.Numeric, true
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
		de := readError(name, rows, err)
		if de.Column > 0 && de.Column <= len(builders) && de.Name == "" {
			de.Name = builders[de.Column-1].name
		}
		return nil, de
	}
	if rows == 0 {
		return nil, &tabular.DataError{File: name, Err: ErrNoRows}
	}
	t := &tabular.Table{Name: name, Rows: rows, Columns: make([]*tabular.Column, len(builders))}
	for i, b := range builders {
		col, err := b.finish(b.kindOf(opts))
		if err != nil {
			err.File = name
			return nil, err
		}
		col.LabelText = b.labelText(opts)
		if w := b.underflowWarning(); w != nil && opts.Warn != nil {
			w.File = name
			opts.Warn(w)
		}
		t.Columns[i] = col
	}
	return t, nil
}

// newColumnBuilders checks the column names of schema (present, valid
// UTF-8, visible, unique) and that every column opts.Kinds names exists,
// and returns one builder per column.
func newColumnBuilders(name string, schema *arrow.Schema, opts ReadOptions) ([]*columnBuilder, error) {
	if schema.NumFields() > MaxColumns {
		return nil, &tabular.DataError{File: name, Err: fmt.Errorf("the table has %d columns, over the cap of %d (MaxColumns)", schema.NumFields(), MaxColumns)}
	}
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
		if invisible(f.Name) {
			return nil, &tabular.DataError{File: name, Line: 1, Column: i + 1,
				Err: fmt.Errorf("the column name %s is only blank or invisible characters; give the column a name that can be read and typed", quoteName(f.Name))}
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
	return builders, nil
}

// readError places a reader's error at the row that follows the last one read.
func readError(name string, rows int, err error) *tabular.DataError {
	var capped *csvCapError
	if errors.As(err, &capped) {
		de := capped.dataError()
		de.File = name
		return de
	}
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
//
// Text cells are read as numbers as they come (into eager), without their
// text, while every present cell of the column does: a numeric column
// then never holds a string per cell. A cell whose text is what
// strconv.FormatFloat(x, 'f', -1, 64) prints followed by zeros ("1.0",
// "2.50") keeps the count of those zeros (pads); the text of any other
// cell that FormatFloat would not give back ("007", "1e3", an
// out-of-range number) is kept beside it (odd). At the first present cell
// that is not a number, the texts of the cells before it are rebuilt,
// exactly, and the column goes on as text (textual).
type columnBuilder struct {
	name    string
	index   int // 1-based
	numeric bool
	boolean bool
	text    []string
	numbers []float64
	missing []bool
	parsed  []float64 // numbers read from text, reused from batch to batch
	any     bool      // a cell has been appended, fixing the storage type
	base    int       // rows before the cells held, which reset drops

	textual bool      // text cells are kept as text, not read as numbers
	eager   []float64 // the numbers of the text cells held, while !textual (0 if missing)
	odd     []oddCell // cells of eager whose text its number would not give back
	pads    []uint8   // per cell of eager, the zeros its text adds to its number's (see padOf); nil while there are none
	format  []byte    // FormatFloat's buffer
	// copyText makes a text column copy its cells out of the reader's
	// batches (keepText), for a table that outlives them.
	copyText bool
	intern   map[string]string // the values copied, so that cells share them

	underflows     int    // nonzero numbers read as 0
	firstUnderflow int    // 1-based row of the first
	underflowCell  string // its text
}

// reset drops the cells held, keeping the storage type and the count of
// underflows, so the builder goes on with the next rows of the column.
func (b *columnBuilder) reset() {
	b.base += len(b.missing)
	b.text, b.numbers, b.missing = b.text[:0], b.numbers[:0], b.missing[:0]
	b.eager, b.odd, b.pads = b.eager[:0], b.odd[:0], b.pads[:0]
}

// oddCell is a cell read as a number whose text the number would not give
// back, and that text.
type oddCell struct {
	i    int // in the cells held
	text string
}

// maxInterned bounds the distinct values a text column shares between its
// cells; past it each further value is a copy of its own.
const maxInterned = 1 << 16

// keepText returns v to hold as a cell of a text column: not the reader's
// string, which would keep the whole batch it was read from alive, but a
// copy shared by the column's cells of the same value.
func (b *columnBuilder) keepText(v string) string {
	if !b.copyText {
		return v
	}
	if s, ok := b.intern[v]; ok {
		return s
	}
	s := strings.Clone(v)
	if b.intern == nil {
		b.intern = make(map[string]string)
	}
	if len(b.intern) < maxInterned {
		b.intern[s] = s
	}
	return s
}

// appendEager reads a text cell as a number while the column is not
// textual, and reports false, reading nothing, for a cell that is not a
// number. A number out of range or not finite counts as a number, as
// inferKind counts it, and keeps its text for finishEager to report.
func (b *columnBuilder) appendEager(v string, missing bool) bool {
	if missing {
		if b.pads != nil {
			b.pads = append(b.pads, 0)
		}
		b.eager = append(b.eager, 0)
		return true
	}
	x, err := readFloat(v)
	if err != nil && !errors.Is(err, strconv.ErrRange) {
		return false
	}
	pad := 0
	switch {
	case err != nil || math.IsNaN(x) || math.IsInf(x, 0):
		pad = -1
	case !plainDecimal(v):
		b.format = strconv.AppendFloat(b.format[:0], x, 'f', -1, 64)
		pad = padOf(v, b.format)
	}
	switch {
	case pad < 0:
		b.odd = append(b.odd, oddCell{i: len(b.eager), text: strings.Clone(v)})
	case pad > 0 && b.pads == nil:
		b.pads = make([]uint8, len(b.eager), cap(b.eager))
	}
	if b.pads != nil {
		b.pads = append(b.pads, uint8(max(pad, 0)))
	}
	b.eager = append(b.eager, x)
	return true
}

// padOf returns how many bytes v adds after printed, the text
// strconv.FormatFloat(x, 'f', -1, 64) gives for the number x read from v:
// 0 when v is printed, the count of trailing zeros (up to 255) when v is
// printed followed by zeros, after a point that printed lacks ("1.0",
// "2.50", "3.000"), and −1 for any other text.
func padOf(v string, printed []byte) int {
	rest, ok := strings.CutPrefix(v, string(printed))
	if !ok || len(rest) > 255 {
		return -1
	}
	zeros := rest
	if bytes.IndexByte(printed, '.') < 0 {
		if zeros, ok = strings.CutPrefix(rest, "."); !ok && rest != "" {
			return -1
		}
		if ok && zeros == "" {
			return -1 // "1." is not "1" followed by zeros
		}
	}
	if strings.Trim(zeros, "0") != "" {
		return -1
	}
	return len(rest)
}

// padded returns the text of a number printed as printed followed by pad
// bytes of padOf: the point it lacks, if it lacks one, and zeros.
func padded(printed string, pad int) string {
	if pad == 0 {
		return printed
	}
	if !strings.Contains(printed, ".") {
		return printed + "." + strings.Repeat("0", pad-1)
	}
	return printed + strings.Repeat("0", pad)
}

// plainDecimal reports whether v is a decimal that strconv.FormatFloat(x,
// 'f', -1, 64) prints back from the float64 x nearest it: an optional
// minus, an integer part without leading zeros, an optional fraction
// ending in a nonzero digit, and at most 15 significant digits. Decimals
// of at most 15 significant digits read as distinct float64s (IEEE 754
// binary64 carries 15 decimal digits at least; DBL_DIG in C, from memory),
// so no shorter decimal reads as x, and the shortest decimal FormatFloat
// prints is v's digits, placed as v places them. That holds for normal
// numbers only: v is also at most 40 bytes long, so its magnitude, if not
// 0, is at least 1e-39, far above the smallest normal float64 (about
// 2.2e-308), and a number too small for a float64 never passes.
func plainDecimal(v string) bool {
	if len(v) > 40 {
		return false
	}
	i := 0
	if i < len(v) && v[i] == '-' {
		i++
	}
	start := i
	for i < len(v) && '0' <= v[i] && v[i] <= '9' {
		i++
	}
	intDigits := i - start
	if intDigits == 0 || intDigits > 1 && v[start] == '0' {
		return false
	}
	significant := intDigits
	if v[start] == '0' {
		significant = 0
	}
	if i == len(v) {
		return significant <= 15
	}
	if v[i] != '.' {
		return false
	}
	i++
	fraction := i
	for i < len(v) && '0' <= v[i] && v[i] <= '9' {
		if v[i] != '0' || significant > 0 {
			significant++
		}
		i++
	}
	return i == len(v) && i > fraction && v[i-1] != '0' && significant <= 15
}

// toText makes the column textual, rebuilding the texts of the cells read
// as numbers.
func (b *columnBuilder) toText() {
	b.textual = true
	b.text = slices.Grow(b.text[:0], len(b.eager))
	odd := b.odd
	for i, x := range b.eager {
		switch {
		case b.missing[i]:
			b.text = append(b.text, "")
		case len(odd) > 0 && odd[0].i == i:
			b.text = append(b.text, odd[0].text)
			odd = odd[1:]
		default:
			pad := 0
			if b.pads != nil {
				pad = int(b.pads[i])
			}
			b.text = append(b.text, b.keepText(padded(strconv.FormatFloat(x, 'f', -1, 64), pad)))
		}
	}
	b.eager, b.odd, b.pads = b.eager[:0], b.odd[:0], b.pads[:0]
}

// kindOf returns the kind opts gives the column, whether it gives one and
// why, for messages ("declared").
func (b *columnBuilder) kindOf(opts ReadOptions) (kind tabular.Kind, given bool, reason string) {
	if kind, given = opts.Kinds[b.name]; given {
		return kind, true, "declared"
	}
	if b.labelText(opts) {
		return tabular.Categorical, true, "read as class labels"
	}
	kind, given = opts.Expected[b.name]
	return kind, given, "the model reads as"
}

// labelText reports whether the column is the target, whose cells are kept
// as written unless its kind is declared (ReadOptions.Target).
func (b *columnBuilder) labelText(opts ReadOptions) bool {
	_, declared := opts.Kinds[b.name]
	return !declared && opts.Target != "" && b.name == opts.Target
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
	if err := checkLayout(arr); err != nil {
		return b.fail(0, err)
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

// checkLayout checks that arr's buffers hold what its length and offsets
// say, so that reading its cells cannot run past them: arrow-go builds
// arrays from the lengths in a file and compares them with the buffers
// only for some types. Fixed-width values it does check (it slices them
// when it builds the array); validity bitmaps, booleans, string offsets and
// dictionary indices it does not.
func checkLayout(arr arrow.Array) error {
	data := arr.Data()
	end := data.Offset() + data.Len()
	bitmapBytes := (end + 7) / 8
	buffers := data.Buffers()
	if len(buffers) > 0 && buffers[0] != nil && buffers[0].Len() > 0 && buffers[0].Len() < bitmapBytes {
		return fmt.Errorf("%w: its null bitmap holds %d bytes for %d rows", errLayout, buffers[0].Len(), data.Len())
	}
	switch a := arr.(type) {
	case *array.Boolean:
		if data.Len() > 0 && (len(buffers) < 2 || buffers[1] == nil || buffers[1].Len() < bitmapBytes) {
			return fmt.Errorf("%w: its values hold fewer bits than its %d rows", errLayout, data.Len())
		}
	case *array.String:
		if err := a.Validate(); err != nil {
			return errLayout
		}
		return checkOffsets(a.ValueOffsets())
	case *array.LargeString:
		if err := a.Validate(); err != nil {
			return errLayout
		}
		return checkOffsets(a.ValueOffsets())
	case *array.Dictionary:
		if err := checkLayout(a.Indices()); err != nil {
			return err
		}
		var dict arrow.Array
		if err := decode(func() error { dict = a.Dictionary(); return nil }); err != nil {
			return fmt.Errorf("%w: its dictionary is malformed", errLayout)
		}
		if err := checkLayout(dict); err != nil {
			return err
		}
		for i := range a.Len() {
			if k := a.GetValueIndex(i); !a.IsNull(i) && (k < 0 || k >= dict.Len()) {
				return fmt.Errorf("%w: row %d points at dictionary entry %d of %d", errLayout, i+1, k, dict.Len())
			}
		}
	}
	return nil
}

// errLayout is wrapped by every failure of checkLayout.
var errLayout = fmt.Errorf("%w: the column's data does not fit its own layout; is the file truncated or corrupt?", ErrUnsupported)

// checkOffsets checks that string offsets never decrease; Validate has
// checked the first and last against the data.
func checkOffsets[T int32 | int64](offsets []T) error {
	if len(offsets) > 0 && offsets[0] < 0 {
		return errLayout
	}
	for i := 1; i < len(offsets); i++ {
		if offsets[i] < offsets[i-1] {
			return errLayout
		}
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
	missing := b.missing[len(b.missing)-1]
	if !b.textual {
		if b.appendEager(v, missing) {
			return nil
		}
		b.toText()
	}
	if missing {
		v = ""
	} else {
		v = b.keepText(v)
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
	if !b.textual {
		if declared && kind != tabular.Numeric || !declared && len(b.eager) == countTrue(b.missing) {
			b.toText() // every cell is missing: inferKind's categorical
		} else {
			return b.finishEager(col)
		}
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
		col.Numbers = b.parsedNumbers()
		for i, v := range b.text {
			if col.IsMissing(i) {
				continue
			}
			t, ok := parseBool(v)
			if !ok { // a declared boolean column may hold 0 and 1
				t, ok = parseBit(v)
			}
			if !ok {
				return nil, b.fail(b.base+i+1, fmt.Errorf("%s is not true, false, 1 or 0, in a column %s boolean", quoteCell(v), reason))
			}
			if t {
				col.Numbers[i] = 1
			}
		}
		return col, nil
	}
	col.Numbers = b.parsedNumbers()
	for i, v := range b.text {
		if col.IsMissing(i) {
			continue
		}
		x, err := parseNumber(v)
		switch {
		case err == nil:
		case errors.Is(err, errNotNumber) && declared:
			return nil, b.fail(b.base+i+1, fmt.Errorf("%w in a column %s numeric; fix the cell, or leave it empty or write NA if it is missing", err, reason))
		case errors.Is(err, errNotNumber):
			return nil, b.fail(b.base+i+1, fmt.Errorf("%w, though %d of the column's %d values are; fix the cell, leave it empty or write NA if it is missing, or declare the column categorical",
				err, b.numberCount(), len(b.text)-countTrue(b.missing)))
		case err != nil:
			return nil, b.fail(b.base+i+1, err)
		}
		if x == 0 && underflows(v) {
			if b.underflows == 0 {
				b.firstUnderflow, b.underflowCell = b.base+i+1, v
			}
			b.underflows++
		}
		col.Numbers[i] = x
	}
	return col, nil
}

// finishEager finishes a numeric column read as numbers: as finish does
// from its texts, it reports the first cell out of range or not finite and
// counts the cells that underflowed to 0.
func (b *columnBuilder) finishEager(col *tabular.Column) (*tabular.Column, *tabular.DataError) {
	col.Kind = tabular.Numeric
	for _, c := range b.odd {
		if _, err := parseNumber(c.text); err != nil {
			return nil, b.fail(b.base+c.i+1, err)
		}
		if b.eager[c.i] == 0 && underflows(c.text) {
			if b.underflows == 0 {
				b.firstUnderflow, b.underflowCell = b.base+c.i+1, c.text
			}
			b.underflows++
		}
	}
	col.Numbers = b.eager
	return col, nil
}

// parsedNumbers returns a zeroed slice for the values of the text cells
// held, reusing the builder's from the last batch.
func (b *columnBuilder) parsedNumbers() []float64 {
	b.parsed = slices.Grow(b.parsed[:0], len(b.text))[:len(b.text)]
	clear(b.parsed)
	return b.parsed
}

// underflowWarning reports the cells of a numeric column that were
// written as a nonzero number too small for a float64 and so read as 0,
// or nil if there were none.
func (b *columnBuilder) underflowWarning() *tabular.DataError {
	if b.underflows == 0 {
		return nil
	}
	cells := "1 cell"
	if b.underflows > 1 {
		cells = fmt.Sprintf("%d cells", b.underflows)
	}
	return b.fail(b.firstUnderflow, fmt.Errorf("%s (first %s) hold a nonzero number smaller than a 64-bit float can store (about 4.9e-324), read as 0",
		cells, quoteCell(b.underflowCell)))
}

// underflows reports whether v, which read as 0, writes a nonzero number:
// a nonzero digit before its exponent.
func underflows(v string) bool {
	mantissa, _, _ := strings.Cut(strings.ToLower(strings.TrimSpace(v)), "e")
	return strings.ContainsAny(mantissa, "123456789")
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
	if v != "" && (v[0] <= ' ' || v[len(v)-1] <= ' ' || v[0] >= utf8.RuneSelf || v[len(v)-1] >= utf8.RuneSelf) {
		v = strings.TrimSpace(v)
	}
	for i := 0; i < len(v); i++ {
		if v[i]|0x20 == 'x' || v[i] == '_' {
			return 0, strconv.ErrSyntax
		}
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
		return 0, fmt.Errorf("%s is outside the range of a 64-bit float", quoteCell(v))
	case err != nil:
		return 0, fmt.Errorf("%s %w", quoteCell(v), errNotNumber)
	case math.IsNaN(x) || math.IsInf(x, 0):
		return 0, fmt.Errorf("%s is not a finite number; leave the cell empty or write NA if it is missing", quoteCell(v))
	}
	return x, nil
}

// maxEchoRunes is how much of a cell an error message repeats.
const maxEchoRunes = 40

// quoteCell quotes a cell for a message, cut after maxEchoRunes characters
// with its length in bytes, so that an error on a megabyte cell stays one
// readable line.
func quoteCell(v string) string {
	n := 0
	for i := range v {
		if n == maxEchoRunes {
			return fmt.Sprintf("%s… (%d bytes)", strconv.Quote(v[:i]), len(v))
		}
		n++
	}
	return strconv.Quote(v)
}

// quoteName quotes a column name with every character that is not plain
// ASCII escaped, so that an invisible one shows.
func quoteName(name string) string { return strconv.QuoteToASCII(name) }

// invisible reports whether a name is made only of white space, control
// characters and default-ignorable characters (Unicode's
// Default_Ignorable_Code_Point: format characters such as U+200B ZERO
// WIDTH SPACE, variation selectors and fillers such as U+3164): a name
// nobody can read or type.
func invisible(name string) bool {
	for _, r := range name {
		switch {
		case unicode.IsSpace(r), unicode.IsControl(r),
			unicode.In(r, unicode.Cf, unicode.Zs, unicode.Other_Default_Ignorable_Code_Point, unicode.Variation_Selector),
			r == '\u2800': // BRAILLE PATTERN BLANK, a common filler
		default:
			return false
		}
	}
	return true
}

// parseBit reads 0 and 1 as false and true, for columns declared boolean.
func parseBit(v string) (bool, bool) {
	switch strings.TrimSpace(v) {
	case "1":
		return true, true
	case "0":
		return false, true
	}
	return false, false
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
