package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"

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

// convert FORMAT IN OUT writes the CSV file IN as an Arrow IPC stream
// (arrows), an Arrow IPC file (arrow) or Parquet (parquet) in batches (row
// groups) of 64 rows, through arrow-go's own writers: an int64 column id
// (1, 2, …) first, then IN's columns, numeric ones as float64, boolean as
// bool, categorical as utf8, missing cells null.
func convert(ts *testscript.TestScript, neg bool, args []string) {
	if neg || len(args) != 3 {
		ts.Fatalf("usage: convert arrows|arrow|parquet IN OUT")
	}
	t, err := ingest.ReadTable(args[1], strings.NewReader(ts.ReadFile(args[1])), ingest.ReadOptions{})
	ts.Check(err)
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
	switch args[0] {
	case "arrows":
		w := ipc.NewWriter(&buf, ipc.WithSchema(schema))
		for _, r := range records {
			ts.Check(w.Write(r))
		}
		ts.Check(w.Close())
	case "arrow":
		w, err := ipc.NewFileWriter(&buf, ipc.WithSchema(schema))
		ts.Check(err)
		for _, r := range records {
			ts.Check(w.Write(r))
		}
		ts.Check(w.Close())
	case "parquet":
		w, err := pqarrow.NewFileWriter(schema, &buf, parquet.NewWriterProperties(), pqarrow.DefaultWriterProps())
		ts.Check(err)
		for _, r := range records {
			ts.Check(w.Write(r))
		}
		ts.Check(w.Close())
	default:
		ts.Fatalf("convert: unknown format %q", args[0])
	}
	for _, r := range records {
		r.Release()
	}
	ts.Check(os.WriteFile(ts.MkAbs(args[2]), buf.Bytes(), 0o666))
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
