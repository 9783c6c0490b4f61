package ingest_test

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"

	"deltafit/ingest"
)

// irisPath is Fisher's (1936) Iris data, 150 rows with the corrections to
// rows 35 and 38 listed in UCI iris.names.
var irisPath = filepath.Join("..", "testdata", "iris.csv")

// irisColumns is the header of testdata/iris.csv.
var irisColumns = []string{"sepal_length", "sepal_width", "petal_length", "petal_width", "species"}

// irisBytes returns the bytes of testdata/iris.csv.
func irisBytes(t testing.TB) []byte {
	t.Helper()
	data, err := os.ReadFile(irisPath)
	if err != nil {
		t.Fatal(err)
	}
	return data
}

// readIris reads testdata/iris.csv through ReadTable with default options.
func readIris(t testing.TB) *ingest.Table {
	t.Helper()
	return readCSVText(t, "iris.csv", string(irisBytes(t)), ingest.ReadOptions{})
}

// readCSVText reads text through ReadTable and fails the test on error.
func readCSVText(t testing.TB, name, text string, opts ingest.ReadOptions) *ingest.Table {
	t.Helper()
	tab, err := ingest.ReadTable(name, bytes.NewReader([]byte(text)), opts)
	if err != nil {
		t.Fatalf("ReadTable(%s): %v", name, err)
	}
	return tab
}

// requireTablesEqual fails unless want and got hold the same columns,
// kinds, values and missing cells.
func requireTablesEqual(t testing.TB, want, got *ingest.Table) {
	t.Helper()
	if got.Rows != want.Rows || len(got.Columns) != len(want.Columns) {
		t.Fatalf("got %d rows × %d columns, want %d × %d", got.Rows, len(got.Columns), want.Rows, len(want.Columns))
	}
	for i, w := range want.Columns {
		g := got.Columns[i]
		if g.Name != w.Name || g.Kind != w.Kind {
			t.Fatalf("column %d is %s (%v), want %s (%v)", i+1, g.Name, g.Kind, w.Name, w.Kind)
		}
		if !reflect.DeepEqual(g.Numbers, w.Numbers) || !reflect.DeepEqual(g.Text, w.Text) || !reflect.DeepEqual(g.Missing, w.Missing) {
			t.Fatalf("column %s differs:\n got %+v\nwant %+v", w.Name, g, w)
		}
	}
}

// tableRecord converts a Table into one Arrow record batch: numeric columns
// as float64, categorical as utf8, boolean as bool, missing cells as nulls.
// The caller releases it.
func tableRecord(t testing.TB, mem memory.Allocator, tab *ingest.Table) arrow.RecordBatch {
	t.Helper()
	fields := make([]arrow.Field, len(tab.Columns))
	arrays := make([]arrow.Array, len(tab.Columns))
	for i, col := range tab.Columns {
		var bld array.Builder
		var typ arrow.DataType
		switch col.Kind {
		case ingest.Numeric:
			b := array.NewFloat64Builder(mem)
			b.AppendValues(col.Numbers, valid(col))
			bld, typ = b, arrow.PrimitiveTypes.Float64
		case ingest.Boolean:
			b := array.NewBooleanBuilder(mem)
			values := make([]bool, len(col.Numbers))
			for r, v := range col.Numbers {
				values[r] = v != 0
			}
			b.AppendValues(values, valid(col))
			bld, typ = b, arrow.FixedWidthTypes.Boolean
		case ingest.Categorical:
			b := array.NewStringBuilder(mem)
			b.AppendValues(col.Text, valid(col))
			bld, typ = b, arrow.BinaryTypes.String
		default:
			t.Fatalf("column %s has kind %v", col.Name, col.Kind)
		}
		arrays[i] = bld.NewArray()
		bld.Release()
		fields[i] = arrow.Field{Name: col.Name, Type: typ, Nullable: true}
	}
	rec := array.NewRecordBatch(arrow.NewSchema(fields, nil), arrays, int64(tab.Rows))
	for _, a := range arrays {
		a.Release()
	}
	return rec
}

// valid is the validity mask of a column for Arrow builders (nil = all valid).
func valid(col *ingest.Column) []bool {
	if col.Missing == nil {
		return nil
	}
	v := make([]bool, len(col.Missing))
	for i, m := range col.Missing {
		v[i] = !m
	}
	return v
}

// asDataError fails the test unless err is a *ingest.DataError.
func asDataError(t testing.TB, err error) *ingest.DataError {
	t.Helper()
	if err == nil {
		t.Fatal("got no error, want a *ingest.DataError")
	}
	var de *ingest.DataError
	if !errors.As(err, &de) {
		t.Fatalf("got %T (%v), want a *ingest.DataError", err, err)
	}
	return de
}
