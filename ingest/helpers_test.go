package ingest_test

import (
	"reflect"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"

	"deltafit/ingest/tabular"
)

// requireTablesEqual fails unless want and got hold the same columns,
// kinds, values and missing cells.
func requireTablesEqual(t testing.TB, want, got *tabular.Table) {
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
func tableRecord(t testing.TB, mem memory.Allocator, tab *tabular.Table) arrow.RecordBatch {
	t.Helper()
	fields := make([]arrow.Field, len(tab.Columns))
	arrays := make([]arrow.Array, len(tab.Columns))
	for i, col := range tab.Columns {
		var bld array.Builder
		var typ arrow.DataType
		switch col.Kind {
		case tabular.Numeric:
			b := array.NewFloat64Builder(mem)
			b.AppendValues(col.Numbers, valid(col))
			bld, typ = b, arrow.PrimitiveTypes.Float64
		case tabular.Boolean:
			b := array.NewBooleanBuilder(mem)
			values := make([]bool, len(col.Numbers))
			for r, v := range col.Numbers {
				values[r] = v != 0
			}
			b.AppendValues(values, valid(col))
			bld, typ = b, arrow.FixedWidthTypes.Boolean
		case tabular.Categorical:
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
func valid(col *tabular.Column) []bool {
	if col.Missing == nil {
		return nil
	}
	v := make([]bool, len(col.Missing))
	for i, m := range col.Missing {
		v[i] = !m
	}
	return v
}
