package export

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"
	"unicode"
	"unicode/utf8"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/compress"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"

	"deltafit/ingest/tabular"
)

// TableFormat is a format of the tables deltafit writes for other programs
// (predictions and encoded patterns).
type TableFormat string

const (
	TableCSV   TableFormat = "csv"   // a header row, then one line per row
	TableJSONL TableFormat = "jsonl" // one JSON object per line, keys in column order
	// TableArrow is an Arrow IPC stream, which a reader takes batch by
	// batch as it arrives, so it pipes.
	TableArrow   TableFormat = "arrow"
	TableParquet TableFormat = "parquet" // Apache Parquet, Snappy-compressed
)

// TableFormats lists the table formats, as the flags take them.
var TableFormats = []TableFormat{TableCSV, TableJSONL, TableArrow, TableParquet}

// ParseTableFormat parses "csv", "jsonl", "arrow" or "parquet".
func ParseTableFormat(s string) (TableFormat, error) {
	if f := TableFormat(s); slices.Contains(TableFormats, f) {
		return f, nil
	}
	return "", fmt.Errorf("export: unknown table format %q (want csv, jsonl, arrow or parquet)", s)
}

// parquetRowGroupRows is the most rows of a Parquet row group. The writer
// holds a row group in memory until it is complete, so this bounds its
// memory whatever the length of the table.
const parquetRowGroupRows = 1 << 16

// column is one column of a batch of output rows.
type column interface {
	// field is the column's name and Arrow type.
	field() arrow.Field
	// appendText appends row i as text (numbers in their shortest form
	// that reads back exactly, booleans as true and false) and reports
	// whether the cell is missing, in which case it appends nothing.
	appendText(dst []byte, i int) (out []byte, missing bool)
	// array returns rows [0, n) as an Arrow array of the field's type.
	array(mem memory.Allocator, n int) arrow.Array
}

// TableOption sets an option of the table writers (NewPredictionWriter,
// NewPatternWriter, WriteOutOfFold).
type TableOption func(*tableConfig)

type tableConfig struct {
	csvTextAsIs bool
}

// CSVTextAsIs(true) writes the text cells of CSV output as they are. By
// default (false) the CSV writers guard every text cell (a label, a kept
// text column, a target cell, a column name) that begins with =, +, -, @,
// a tab or a carriage return and is not a decimal number: they write it
// with a ' before it, so that a spreadsheet opening the file shows the
// text instead of evaluating it as a formula (common practice against
// formula injection in CSV files; the list of characters from memory). A
// decimal number such as -1 or +0.5 in a text cell stays as it is, as a
// spreadsheet reads it as that number; numeric columns are never changed,
// nor is any other format than CSV.
func CSVTextAsIs(asIs bool) TableOption {
	return func(c *tableConfig) { c.csvTextAsIs = asIs }
}

// formulaLike reports whether a CSV text cell is guarded (CSVTextAsIs).
func formulaLike(text []byte) bool {
	if len(text) == 0 {
		return false
	}
	switch text[0] {
	case '=', '@', '\t', '\r':
		return true
	case '+', '-':
		return !isDecimal(text)
	}
	return false
}

// isDecimal reports whether b is a decimal number: an optional sign,
// digits with at most one decimal point (at least one digit), and an
// optional exponent (e or E, an optional sign, digits).
func isDecimal(b []byte) bool {
	i := 0
	if i < len(b) && (b[i] == '+' || b[i] == '-') {
		i++
	}
	digits, point := 0, false
	for ; i < len(b); i++ {
		if c := b[i]; c >= '0' && c <= '9' {
			digits++
		} else if c == '.' && !point {
			point = true
		} else {
			break
		}
	}
	if digits == 0 {
		return false
	}
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		i++
		if i < len(b) && (b[i] == '+' || b[i] == '-') {
			i++
		}
		start := i
		for i < len(b) && b[i] >= '0' && b[i] <= '9' {
			i++
		}
		if i == start {
			return false
		}
	}
	return i == len(b)
}

// tableWriter writes batches of columns in a TableFormat. The CSV header
// and the Arrow and Parquet preambles are written with the first batch
// (or by close, for a table of no rows).
type tableWriter struct {
	format  TableFormat
	w       io.Writer
	schema  *arrow.Schema
	mem     memory.Allocator
	config  tableConfig
	started bool
	buf     []byte
	guarded []byte            // CSV: a text cell with its guard
	keys    [][]byte          // JSONL: each column's `"name":`, with its separator
	labels  map[string][]byte // CSV: labels as fields
	ipc     *ipc.Writer
	pq      *pqarrow.FileWriter
}

func newTableWriter(w io.Writer, format TableFormat, fields []arrow.Field, opts []TableOption) (*tableWriter, error) {
	if _, err := ParseTableFormat(string(format)); err != nil {
		return nil, err
	}
	var config tableConfig
	for _, o := range opts {
		o(&config)
	}
	seen := make(map[string]bool, len(fields))
	for _, f := range fields {
		if seen[f.Name] {
			return nil, fmt.Errorf("export: the output would have two columns named %q", f.Name)
		}
		seen[f.Name] = true
	}
	return &tableWriter{format: format, w: w, schema: arrow.NewSchema(fields, nil), mem: memory.DefaultAllocator, config: config}, nil
}

// start writes what comes before the rows.
func (tw *tableWriter) start() error {
	tw.started = true
	switch tw.format {
	case TableCSV:
		b := tw.buf[:0]
		for i, f := range tw.schema.Fields() {
			if i > 0 {
				b = append(b, ',')
			}
			b = tw.appendCSVText(b, []byte(f.Name))
		}
		tw.buf = append(b, '\n')
		return tw.flush()
	case TableJSONL:
		for i, f := range tw.schema.Fields() {
			key := []byte{','}
			if i == 0 {
				key = []byte{'{'}
			}
			key = appendJSONString(key, f.Name)
			tw.keys = append(tw.keys, append(key, ':'))
		}
	case TableArrow:
		tw.ipc = ipc.NewWriter(tw.w, ipc.WithSchema(tw.schema), ipc.WithAllocator(tw.mem))
	case TableParquet:
		props := parquet.NewWriterProperties(
			parquet.WithCompression(compress.Codecs.Snappy),
			parquet.WithMaxRowGroupLength(parquetRowGroupRows),
			parquet.WithAllocator(tw.mem),
			parquet.WithCreatedBy("deltafit "+Version))
		pq, err := pqarrow.NewFileWriter(tw.schema, tw.w, props, pqarrow.NewArrowWriterProperties(pqarrow.WithAllocator(tw.mem)))
		if err != nil {
			return fmt.Errorf("export: %w", err)
		}
		tw.pq = pq
	}
	return nil
}

func (tw *tableWriter) flush() error {
	_, err := tw.w.Write(tw.buf)
	tw.buf = tw.buf[:0]
	return err
}

// write writes rows [0, n) of cols, which match the writer's fields.
// cellError names a cell in errors: the column's position in cols and the
// row.
func (tw *tableWriter) write(cols []column, n int, cellError func(col, row int, err error) error) error {
	if !tw.started {
		if err := tw.start(); err != nil {
			return err
		}
	}
	switch tw.format {
	case TableCSV:
		return tw.writeCSV(cols, n)
	case TableJSONL:
		return tw.writeJSONL(cols, n, cellError)
	}
	arrays := make([]arrow.Array, len(cols))
	for j, c := range cols {
		arrays[j] = c.array(tw.mem, n)
	}
	rec := array.NewRecordBatch(tw.schema, arrays, int64(n))
	for _, a := range arrays {
		a.Release()
	}
	defer rec.Release()
	var err error
	if tw.format == TableArrow {
		err = tw.ipc.Write(rec)
	} else {
		err = tw.pq.WriteBuffered(rec)
	}
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	return nil
}

// textFlushBytes is the size at which the text writers pass on what they
// have formatted.
const textFlushBytes = 64 << 10

func (tw *tableWriter) writeCSV(cols []column, n int) error {
	text := make([]bool, len(cols)) // the columns of text, whose cells are guarded
	for j, c := range cols {
		id := c.field().Type.ID()
		text[j] = id == arrow.STRING || id == arrow.LARGE_STRING
	}
	var cell []byte
	for i := range n {
		for j, col := range cols {
			if j > 0 {
				tw.buf = append(tw.buf, ',')
			}
			switch c := col.(type) {
			case floatColumn, intColumn: // numbers never need quotes
				tw.buf, _ = c.appendText(tw.buf, i)
			case labelColumn:
				tw.buf = append(tw.buf, tw.csvLabel(c.labels[c.index[i]])...)
			default:
				var missing bool
				cell, missing = c.appendText(cell[:0], i)
				if text[j] && !missing {
					tw.buf = tw.appendCSVText(tw.buf, cell)
				} else {
					tw.buf = appendCSVField(tw.buf, cell)
				}
			}
		}
		tw.buf = append(tw.buf, '\n')
		if len(tw.buf) >= textFlushBytes {
			if err := tw.flush(); err != nil {
				return err
			}
		}
	}
	return tw.flush()
}

func (tw *tableWriter) writeJSONL(cols []column, n int, cellError func(col, row int, err error) error) error {
	var cell []byte
	for i := range n {
		for j, c := range cols {
			tw.buf = append(tw.buf, tw.keys[j]...)
			var missing bool
			cell, missing = c.appendText(cell[:0], i)
			switch typ := c.field().Type; {
			case missing:
				tw.buf = append(tw.buf, "null"...)
			case typ.ID() == arrow.STRING || typ.ID() == arrow.LARGE_STRING:
				if !utf8.Valid(cell) {
					return cellError(j, i, errors.New("the text is not valid UTF-8, which JSON cannot hold; write csv, arrow or parquet, or re-save the input as UTF-8"))
				}
				tw.buf = appendJSONString(tw.buf, string(cell))
			case bytes.ContainsAny(cell, "IN"): // NaN, +Inf, -Inf
				return cellError(j, i, fmt.Errorf("%s is not a finite number, which JSON cannot hold; write csv, arrow or parquet", cell))
			default:
				tw.buf = append(tw.buf, cell...)
			}
		}
		if len(cols) == 0 {
			tw.buf = append(tw.buf, '{')
		}
		tw.buf = append(tw.buf, "}\n"...)
		if len(tw.buf) >= textFlushBytes {
			if err := tw.flush(); err != nil {
				return err
			}
		}
	}
	return tw.flush()
}

// csvLabel returns a label as a CSV field, guarded and quoted if it needs
// to be, from the writer's cache.
func (tw *tableWriter) csvLabel(label string) []byte {
	field, ok := tw.labels[label]
	if !ok {
		if tw.labels == nil {
			tw.labels = map[string][]byte{}
		}
		field = tw.appendCSVText(nil, []byte(label))
		tw.labels[label] = field
	}
	return field
}

// appendCSVText appends a text cell to dst as a CSV field: guarded (see
// CSVTextAsIs) unless the writer writes text as is, then quoted if it
// needs to be.
func (tw *tableWriter) appendCSVText(dst, text []byte) []byte {
	if !tw.config.csvTextAsIs && formulaLike(text) {
		tw.guarded = append(append(tw.guarded[:0], '\''), text...)
		text = tw.guarded
	}
	return appendCSVField(dst, text)
}

// close ends the table: the CSV header of a table of no rows, the end of
// an Arrow stream, the footer of a Parquet file.
func (tw *tableWriter) close() error {
	if !tw.started {
		if err := tw.start(); err != nil {
			return err
		}
	}
	var err error
	switch {
	case tw.ipc != nil:
		err = tw.ipc.Close()
	case tw.pq != nil:
		err = tw.pq.Close()
	}
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	return nil
}

// appendCSVField appends field to dst as encoding/csv writes it with a
// comma: quoted, with quotes doubled, when it holds a comma, a quote or a
// line break, begins with white space or is `\.`.
func appendCSVField(dst, field []byte) []byte {
	quote := string(field) == `\.` || bytes.ContainsAny(field, ",\"\r\n")
	if !quote && len(field) > 0 {
		r, _ := utf8.DecodeRune(field)
		quote = unicode.IsSpace(r)
	}
	if !quote {
		return append(dst, field...)
	}
	dst = append(dst, '"')
	for {
		i := bytes.IndexByte(field, '"')
		if i < 0 {
			break
		}
		dst = append(dst, field[:i+1]...)
		dst = append(dst, '"')
		field = field[i+1:]
	}
	dst = append(dst, field...)
	return append(dst, '"')
}

// appendJSONString appends s as a JSON string: quotes, backslashes and
// control characters escaped, the rest as it is (s is valid UTF-8).
func appendJSONString(dst []byte, s string) []byte {
	const hex = "0123456789abcdef"
	dst = append(dst, '"')
	start := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c >= 0x20 && c != '"' && c != '\\' {
			continue
		}
		dst = append(dst, s[start:i]...)
		switch c {
		case '"', '\\':
			dst = append(dst, '\\', c)
		case '\n':
			dst = append(dst, '\\', 'n')
		case '\r':
			dst = append(dst, '\\', 'r')
		case '\t':
			dst = append(dst, '\\', 't')
		default:
			dst = append(dst, '\\', 'u', '0', '0', hex[c>>4], hex[c&0xf])
		}
		start = i + 1
	}
	dst = append(dst, s[start:]...)
	return append(dst, '"')
}

// appendFloat appends x in the shortest form that reads back as x.
func appendFloat(dst []byte, x float64) []byte { return strconv.AppendFloat(dst, x, 'g', -1, 64) }

// floatColumn is a column of float64 values, element offset+i·stride of
// values for row i (the scores of one class, the values of one unit).
type floatColumn struct {
	name           string
	values         []float64
	offset, stride int
}

func (c floatColumn) field() arrow.Field {
	return arrow.Field{Name: c.name, Type: arrow.PrimitiveTypes.Float64}
}

func (c floatColumn) appendText(dst []byte, i int) ([]byte, bool) {
	return appendFloat(dst, c.values[c.offset+i*c.stride]), false
}

func (c floatColumn) array(mem memory.Allocator, n int) arrow.Array {
	b := array.NewFloat64Builder(mem)
	defer b.Release()
	b.Reserve(n)
	for i := range n {
		b.UnsafeAppend(c.values[c.offset+i*c.stride])
	}
	return b.NewArray()
}

// intColumn is a column of integers (row numbers), written as int64.
type intColumn struct {
	name   string
	values func(i int) int
}

func (c intColumn) field() arrow.Field {
	return arrow.Field{Name: c.name, Type: arrow.PrimitiveTypes.Int64}
}

func (c intColumn) appendText(dst []byte, i int) ([]byte, bool) {
	return strconv.AppendInt(dst, int64(c.values(i)), 10), false
}

func (c intColumn) array(mem memory.Allocator, n int) arrow.Array {
	b := array.NewInt64Builder(mem)
	defer b.Release()
	b.Reserve(n)
	for i := range n {
		b.UnsafeAppend(int64(c.values(i)))
	}
	return b.NewArray()
}

// labelColumn is a column of text: labels[index[i]] for row i (the
// predicted class).
type labelColumn struct {
	name   string
	labels []string
	index  []int
}

func (c labelColumn) field() arrow.Field {
	return arrow.Field{Name: c.name, Type: arrow.BinaryTypes.String}
}

func (c labelColumn) appendText(dst []byte, i int) ([]byte, bool) {
	return append(dst, c.labels[c.index[i]]...), false
}

func (c labelColumn) array(mem memory.Allocator, n int) arrow.Array {
	b := array.NewStringBuilder(mem)
	defer b.Release()
	b.Reserve(n)
	for i := range n {
		b.Append(c.labels[c.index[i]])
	}
	return b.NewArray()
}

// tableColumn is a column of a tabular.Table, as its text (a target
// column): text, missing cells null.
type tableColumn struct {
	col *tabular.Column
}

func (c tableColumn) field() arrow.Field {
	return arrow.Field{Name: c.col.Name, Type: arrow.BinaryTypes.String, Nullable: true}
}

func (c tableColumn) appendText(dst []byte, i int) ([]byte, bool) {
	if c.col.IsMissing(i) {
		return dst, true
	}
	return append(dst, c.col.Value(i)...), false
}

func (c tableColumn) array(mem memory.Allocator, n int) arrow.Array {
	b := array.NewStringBuilder(mem)
	defer b.Release()
	b.Reserve(n)
	for i := range n {
		if c.col.IsMissing(i) {
			b.AppendNull()
		} else {
			b.Append(c.col.Value(i))
		}
	}
	return b.NewArray()
}

// KeepField returns the output field of an input column passed through:
// its own name and type, a dictionary's values' type for a dictionary
// (each batch written with its values, as the input's dictionaries may
// differ from batch to batch). It refuses the types the readers refuse.
func KeepField(f arrow.Field) (arrow.Field, error) {
	typ := f.Type
	if d, ok := typ.(*arrow.DictionaryType); ok {
		typ = d.ValueType
	}
	switch typ.ID() {
	case arrow.STRING, arrow.LARGE_STRING, arrow.BOOL,
		arrow.FLOAT16, arrow.FLOAT32, arrow.FLOAT64,
		arrow.INT8, arrow.INT16, arrow.INT32, arrow.INT64,
		arrow.UINT8, arrow.UINT16, arrow.UINT32, arrow.UINT64:
		return arrow.Field{Name: f.Name, Type: typ, Nullable: true}, nil
	}
	return arrow.Field{}, fmt.Errorf("export: column %s has Arrow type %s, which cannot be passed through", f.Name, f.Type)
}

// arrowColumn is an input column passed through (--keep): row i is value
// i of arr, or value take[i] when take is not nil.
type arrowColumn struct {
	f    arrow.Field // as KeepField returns it
	arr  arrow.Array
	take []int
}

func (c arrowColumn) field() arrow.Field { return c.f }

func (c arrowColumn) appendText(dst []byte, i int) ([]byte, bool) {
	arr, k := c.value(i)
	if k < 0 {
		return dst, true
	}
	return appendArrowValue(dst, arr, k), false
}

// value returns the array and index that hold row i's value, a
// dictionary's values for a dictionary, or k < 0 for a missing cell.
func (c arrowColumn) value(i int) (arr arrow.Array, k int) {
	arr, k = c.arr, i
	if c.take != nil {
		k = c.take[i]
	}
	if d, ok := arr.(*array.Dictionary); ok {
		if d.IsNull(k) {
			return nil, -1
		}
		arr, k = d.Dictionary(), d.GetValueIndex(k)
	}
	if arr.IsNull(k) {
		return nil, -1
	}
	return arr, k
}

// appendArrowValue appends value i of arr (not null) as text.
func appendArrowValue(dst []byte, arr arrow.Array, i int) []byte {
	switch a := arr.(type) {
	case *array.String:
		return append(dst, a.Value(i)...)
	case *array.LargeString:
		return append(dst, a.Value(i)...)
	case *array.Boolean:
		return strconv.AppendBool(dst, a.Value(i))
	case *array.Float64:
		return appendFloat(dst, a.Value(i))
	case *array.Float32:
		return strconv.AppendFloat(dst, float64(a.Value(i)), 'g', -1, 32)
	case *array.Float16:
		return strconv.AppendFloat(dst, float64(a.Value(i).Float32()), 'g', -1, 32)
	case *array.Int8:
		return strconv.AppendInt(dst, int64(a.Value(i)), 10)
	case *array.Int16:
		return strconv.AppendInt(dst, int64(a.Value(i)), 10)
	case *array.Int32:
		return strconv.AppendInt(dst, int64(a.Value(i)), 10)
	case *array.Int64:
		return strconv.AppendInt(dst, a.Value(i), 10)
	case *array.Uint8:
		return strconv.AppendUint(dst, uint64(a.Value(i)), 10)
	case *array.Uint16:
		return strconv.AppendUint(dst, uint64(a.Value(i)), 10)
	case *array.Uint32:
		return strconv.AppendUint(dst, uint64(a.Value(i)), 10)
	case *array.Uint64:
		return strconv.AppendUint(dst, a.Value(i), 10)
	}
	panic(fmt.Sprintf("export: no text for Arrow type %s; KeepField refuses it", arr.DataType()))
}

func (c arrowColumn) array(mem memory.Allocator, n int) arrow.Array {
	if _, dict := c.arr.(*array.Dictionary); !dict && c.take == nil && c.arr.Len() == n {
		c.arr.Retain()
		return c.arr
	}
	b := array.NewBuilder(mem, c.f.Type)
	defer b.Release()
	b.Reserve(n)
	for i := range n {
		if arr, k := c.value(i); k < 0 {
			b.AppendNull()
		} else {
			appendValueTo(b, arr, k)
		}
	}
	return b.NewArray()
}

// appendValueTo appends value k of arr to b, a builder of arr's type.
func appendValueTo(b array.Builder, arr arrow.Array, k int) {
	switch a := arr.(type) {
	case *array.String:
		b.(*array.StringBuilder).Append(a.Value(k))
	case *array.LargeString:
		b.(*array.LargeStringBuilder).Append(a.Value(k))
	case *array.Boolean:
		b.(*array.BooleanBuilder).Append(a.Value(k))
	case *array.Float64:
		b.(*array.Float64Builder).Append(a.Value(k))
	case *array.Float32:
		b.(*array.Float32Builder).Append(a.Value(k))
	case *array.Float16:
		b.(*array.Float16Builder).Append(a.Value(k))
	case *array.Int8:
		b.(*array.Int8Builder).Append(a.Value(k))
	case *array.Int16:
		b.(*array.Int16Builder).Append(a.Value(k))
	case *array.Int32:
		b.(*array.Int32Builder).Append(a.Value(k))
	case *array.Int64:
		b.(*array.Int64Builder).Append(a.Value(k))
	case *array.Uint8:
		b.(*array.Uint8Builder).Append(a.Value(k))
	case *array.Uint16:
		b.(*array.Uint16Builder).Append(a.Value(k))
	case *array.Uint32:
		b.(*array.Uint32Builder).Append(a.Value(k))
	case *array.Uint64:
		b.(*array.Uint64Builder).Append(a.Value(k))
	default:
		panic(fmt.Sprintf("export: no builder for Arrow type %s; KeepField refuses it", arr.DataType()))
	}
}

// keepColumns pairs the kept fields with a batch's arrays, whose rows are
// take (nil: the arrays' own rows, in order).
func keepColumns(fields []arrow.Field, arrays []arrow.Array, take []int) ([]column, error) {
	if len(arrays) != len(fields) {
		return nil, fmt.Errorf("export: %d kept columns given for %d fields", len(arrays), len(fields))
	}
	cols := make([]column, len(fields))
	for i, f := range fields {
		cols[i] = arrowColumn{f: f, arr: arrays[i], take: take}
	}
	return cols, nil
}
