package main

import (
	"bytes"
	"crypto/sha256"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"
	"github.com/rogpeppe/go-internal/testscript"

	"deltafit/ingest"
	"deltafit/ingest/tabular"
)

// convert FORMAT IN OUT writes the CSV file IN as FORMAT (see
// convertCSV).
func convert(ts *testscript.TestScript, neg bool, args []string) {
	if neg || len(args) != 3 {
		ts.Fatalf("usage: convert arrows|arrow|parquet IN OUT")
	}
	b, err := convertCSV(args[0], args[1], ts.ReadFile(args[1]))
	ts.Check(err)
	ts.Check(os.WriteFile(ts.MkAbs(args[2]), b, 0o666))
}

// convertCSV writes the CSV text as an Arrow IPC stream (arrows), an Arrow
// IPC file (arrow) or Parquet (parquet) in batches (row groups) of 64
// rows, through arrow-go's own writers: an int64 column id (1, 2, …) first,
// then the CSV's columns, numeric ones as float64, boolean as bool,
// categorical as utf8, missing cells null.
func convertCSV(format, name, text string) ([]byte, error) {
	t, err := ingest.ReadTable(name, strings.NewReader(text), ingest.ReadOptions{})
	if err != nil {
		return nil, err
	}
	mem := memory.NewGoAllocator()
	fields := []arrow.Field{{Name: "id", Type: arrow.PrimitiveTypes.Int64}}
	for _, c := range t.Columns {
		typ := arrow.DataType(arrow.BinaryTypes.String)
		switch c.Kind {
		case tabular.Numeric:
			typ = arrow.PrimitiveTypes.Float64
		case tabular.Boolean:
			typ = arrow.FixedWidthTypes.Boolean
		}
		fields = append(fields, arrow.Field{Name: c.Name, Type: typ, Nullable: true})
	}
	schema := arrow.NewSchema(fields, nil)
	var records []arrow.RecordBatch
	defer func() {
		for _, r := range records {
			r.Release()
		}
	}()
	for lo := 0; lo < t.Rows; lo += 64 {
		hi := min(lo+64, t.Rows)
		b := array.NewRecordBuilder(mem, schema)
		for i := lo; i < hi; i++ {
			b.Field(0).(*array.Int64Builder).Append(int64(i + 1))
			for j, c := range t.Columns {
				fb := b.Field(j + 1)
				switch {
				case c.IsMissing(i):
					fb.AppendNull()
				case c.Kind == tabular.Numeric:
					fb.(*array.Float64Builder).Append(c.Numbers[i])
				case c.Kind == tabular.Boolean:
					fb.(*array.BooleanBuilder).Append(c.Numbers[i] != 0)
				default:
					fb.(*array.StringBuilder).Append(c.Text[i])
				}
			}
		}
		records = append(records, b.NewRecordBatch())
		b.Release()
	}
	var buf bytes.Buffer
	type recordWriter interface {
		Write(arrow.RecordBatch) error
		Close() error
	}
	var w recordWriter
	switch format {
	case "arrows":
		w = ipc.NewWriter(&buf, ipc.WithSchema(schema))
	case "arrow":
		if w, err = ipc.NewFileWriter(&buf, ipc.WithSchema(schema)); err != nil {
			return nil, err
		}
	case "parquet":
		if w, err = pqarrow.NewFileWriter(schema, &buf, parquet.NewWriterProperties(), pqarrow.DefaultWriterProps()); err != nil {
			return nil, err
		}
	default:
		return nil, fmt.Errorf("convert: unknown format %q", format)
	}
	for _, r := range records {
		if err := w.Write(r); err != nil {
			return nil, err
		}
	}
	if err := w.Close(); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// testdata/iris.parquet and testdata/iris.arrows are iris.csv with an id
// column, as convertCSV writes it (go test ./cmd/deltafit -run
// TestIrisCopies -update rewrites them): they read back as iris.csv's
// table beside ids 1 to 150.
func TestIrisCopies(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata")
	text, err := os.ReadFile(filepath.Join(dir, "iris.csv"))
	if err != nil {
		t.Fatal(err)
	}
	want, err := ingest.ReadTable("iris.csv", bytes.NewReader(text), ingest.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, format := range []string{"parquet", "arrows"} {
		path := filepath.Join(dir, "iris."+format)
		if *update {
			b, err := convertCSV(format, "iris.csv", string(text))
			if err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(path, b, 0o666); err != nil {
				t.Fatal(err)
			}
		}
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		got, err := ingest.ReadTable(path, bytes.NewReader(b), ingest.ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		id := got.Columns[0]
		if id.Name != "id" || got.Rows != 150 || id.Numbers[0] != 1 || id.Numbers[149] != 150 {
			t.Fatalf("%s: no id column 1 to 150", path)
		}
		got.Columns = got.Columns[1:]
		if !reflect.DeepEqual(got.Columns, want.Columns) {
			t.Fatalf("%s does not hold iris.csv's columns", path)
		}
	}
}

// readtable FILE prints the schema of an Arrow IPC or Parquet file (any
// format deltafit reads), one "name type" line per column, read by
// arrow-go, then "rows N batches B".
func readtable(ts *testscript.TestScript, neg bool, args []string) {
	if neg || len(args) != 1 {
		ts.Fatalf("usage: readtable FILE")
	}
	rr, err := ingest.NewRecordReader(args[0], strings.NewReader(ts.ReadFile(args[0])), ingest.ReadOptions{})
	ts.Check(err)
	defer rr.Release()
	for _, f := range rr.Schema().Fields() {
		fmt.Fprintf(ts.Stdout(), "%s %s\n", f.Name, f.Type)
	}
	rows, batches := 0, 0
	for rr.Next() {
		rows += int(rr.RecordBatch().NumRows())
		batches++
	}
	ts.Check(rr.Err())
	fmt.Fprintf(ts.Stdout(), "rows %d batches %d\n", rows, batches)
}

// sumscores NORM RAW reads two prediction CSV files of the same rows and
// prints how many rows NORM has, how many of its rows' scores sum to 1
// within 1e-15, and how many predict the class RAW predicts.
func sumscores(ts *testscript.TestScript, neg bool, args []string) {
	if neg || len(args) != 2 {
		ts.Fatalf("usage: sumscores NORM RAW")
	}
	read := func(name string) [][]string {
		records, err := csv.NewReader(strings.NewReader(ts.ReadFile(name))).ReadAll()
		ts.Check(err)
		return records[1:]
	}
	norm, raw := read(args[0]), read(args[1])
	if len(norm) != len(raw) {
		ts.Fatalf("%d rows against %d", len(norm), len(raw))
	}
	sums, same := 0, 0
	for i, r := range norm {
		total := 0.0
		for _, f := range r[2:] {
			x, err := strconv.ParseFloat(f, 64)
			ts.Check(err)
			total += x
		}
		if math.Abs(total-1) <= 1e-15 {
			sums++
		}
		if r[1] == raw[i][1] {
			same++
		}
	}
	fmt.Fprintf(ts.Stdout(), "rows %d, sums within 1e-15 of 1: %d, classes as %s: %d\n", len(norm), sums, args[1], same)
}

// Parquet in a regular file is read in place (ingest.ReadOptions.Source),
// past the reader's first 64 KiB; the model's sha256 is still that of the
// whole file, as sha256sum gives it.
func TestParquetInPlaceHashesWholeFile(t *testing.T) {
	iris, err := os.ReadFile(filepath.Join("..", "..", "testdata", "iris.csv"))
	if err != nil {
		t.Fatal(err)
	}
	header, rows, _ := strings.Cut(string(iris), "\n")
	b, err := convertCSV("parquet", "tall.csv", header+"\n"+strings.Repeat(rows, 40))
	if err != nil {
		t.Fatal(err)
	}
	if len(b) <= 64<<10 {
		t.Fatalf("the Parquet file holds %d bytes, within the reader's first 64 KiB", len(b))
	}
	dir := t.TempDir()
	data, model := filepath.Join(dir, "tall.parquet"), filepath.Join(dir, "m.json")
	if err := os.WriteFile(data, b, 0o666); err != nil {
		t.Fatal(err)
	}
	var stderr bytes.Buffer
	if code := run(t.Context(), []string{"fit", data, "--target", "species", "--ignore", "id", "--epochs", "5", "-o", model}, nil, io.Discard, &stderr); code != 0 {
		t.Fatalf("fit exited %d: %s", code, stderr.String())
	}
	m, err := os.ReadFile(model)
	if err != nil {
		t.Fatal(err)
	}
	var got struct {
		Data struct {
			SHA256 string `json:"sha256"`
		} `json:"data"`
	}
	if err := json.Unmarshal(m, &got); err != nil {
		t.Fatal(err)
	}
	if want := fmt.Sprintf("%x", sha256.Sum256(b)); got.Data.SHA256 != want {
		t.Errorf("the model records sha256 %s, the file's is %s", got.Data.SHA256, want)
	}
}
