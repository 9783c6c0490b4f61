package ingest_test

import (
	"bytes"
	"errors"
	"fmt"
	"runtime"
	"strings"
	"testing"
	"testing/iotest"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"

	"deltafit/ingest"
	"deltafit/ingest/tabular"
	"deltafit/internal/fixture"
)

// readChecked reads text with a checked allocator, asserting that every
// Arrow byte is released, and returns the table, the error and the bytes
// the Go heap allocated during the read.
func readChecked(t *testing.T, text string, opts ingest.ReadOptions) (*tabular.Table, error, uint64) {
	t.Helper()
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	defer mem.AssertSize(t, 0)
	opts.Allocator = mem
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	table, err := ingest.ReadTable("in.csv", strings.NewReader(text), opts)
	runtime.ReadMemStats(&after)
	return table, err, after.TotalAlloc - before.TotalAlloc
}

// TestReadCSVCapsWhileReading: a cell over MaxCellBytes and a row over
// MaxRecordBytes are refused as they are read, at their line and column,
// so the reader allocates a small multiple of the cap, not of the cell.
func TestReadCSVCapsWhileReading(t *testing.T) {
	under := strings.Repeat("a", ingest.MaxCellBytes-1)
	var header strings.Builder
	for i := range 20 {
		fmt.Fprintf(&header, "c%d,", i)
	}
	// encoding/csv grows its line and record buffers by a quarter at a
	// time (Go's append), so reading n bytes of a record allocates about
	// 10n; 16 times the cap leaves room for that and nothing proportional
	// to the cell.
	const cellBound, recordBound = 16 * ingest.MaxCellBytes, 16 * ingest.MaxRecordBytes
	tests := []struct {
		name         string
		text         string
		line, column int
		want         string
		bound        uint64
	}{
		{"64 MB cell", "x,y\n1,a\n" + strings.Repeat("b", 64<<20) + ",c\n", 3, 1, "MaxCellBytes", cellBound},
		{"64 MB quoted cell", "x,y\n1,\"" + strings.Repeat("b", 64<<20) + "\"\n", 2, 2, "MaxCellBytes", cellBound},
		{"open quote", "x,y\n1,\"a\n" + strings.Repeat("2,b\n", 1<<20), 2, 2, "MaxCellBytes", cellBound},
		{"20 MB row", header.String() + "y\n" + strings.Repeat(under+",", 20) + "a\n", 2, 0, "MaxRecordBytes", recordBound},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err, allocated := readChecked(t, tt.text, ingest.ReadOptions{})
			de := fixture.AsDataError(t, err)
			if de.Line != tt.line || de.Column != tt.column || !strings.Contains(de.Error(), tt.want) {
				t.Fatalf("error at line %d column %d: %v; want line %d column %d and %s", de.Line, de.Column, de, tt.line, tt.column, tt.want)
			}
			if allocated > tt.bound {
				t.Fatalf("the read allocated %d MiB", allocated>>20)
			}
		})
	}
	// Up to the cap is fine, quoted with doubled quotes too (each pair is
	// one byte of the value, RFC 4180 §2.7).
	atCap := strings.Repeat(`a""`, ingest.MaxCellBytes/2)
	table, err, _ := readChecked(t, "x,y\n1,\""+atCap+"\"\n2,b\n", ingest.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if got := len(table.Column("y").Text[0]); got != ingest.MaxCellBytes {
		t.Fatalf("the cell reads as %d bytes, want %d", got, ingest.MaxCellBytes)
	}
}

// TestReadCSVLoneCR reads lines ended by a lone CR (old Mac files) as
// lines, also when the input arrives a byte at a time, while a CR inside
// quotes stays part of the cell.
func TestReadCSVLoneCR(t *testing.T) {
	want := fixture.ReadIris(t)
	text := fixture.JoinCells(fixture.IrisCells(), ",", "\r")
	for name, r := range map[string]func() *tabular.Table{
		"whole": func() *tabular.Table { return fixture.ReadCSVText(t, "iris.csv", text, ingest.ReadOptions{}) },
		"a byte at a time": func() *tabular.Table {
			table, err := ingest.ReadTable("iris.csv", iotest.OneByteReader(strings.NewReader(text)), ingest.ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			return table
		},
	} {
		t.Run(name, func(t *testing.T) { requireTablesEqual(t, want, r()) })
	}
	table := fixture.ReadCSVText(t, "in.csv", "x,note\r1,\"two\rlines\"\r2,b\r", ingest.ReadOptions{})
	if table.Rows != 2 || table.Column("note").Text[0] != "two\rlines" {
		t.Fatalf("%d rows, note %q", table.Rows, table.Column("note").Text[0])
	}
}

// TestReadCSVMultiByteDelimiter: a delimiter of several UTF-8 bytes splits
// cells, and the cell cap counts each cell on its own.
func TestReadCSVMultiByteDelimiter(t *testing.T) {
	want := fixture.ReadIris(t)
	requireTablesEqual(t, want, fixture.ReadCSVText(t, "iris.csv", fixture.JoinCells(fixture.IrisCells(), "§", "\n"), ingest.ReadOptions{Delimiter: '§'}))
	cell := strings.Repeat("a", ingest.MaxCellBytes-10)
	text := "x§y§z\n" + cell + "§" + cell + "§1\n"
	if _, err := ingest.ReadTable("in.csv", strings.NewReader(text), ingest.ReadOptions{Delimiter: '§'}); err != nil {
		t.Fatalf("two cells under the cap: %v", err)
	}
}

// TestReadCSVWideBatches: a wide table is read in batches of at most 2^19
// cells (one row at least), and a header over MaxColumns is refused.
func TestReadCSVWideBatches(t *testing.T) {
	for _, columns := range []int{5, 5000, 100_000} {
		t.Run(fmt.Sprint(columns), func(t *testing.T) {
			var b strings.Builder
			for row := range 4 {
				for c := range columns {
					if row == 0 {
						fmt.Fprintf(&b, "c%d", c)
					} else {
						fmt.Fprintf(&b, "%d", (c+row)%10)
					}
					b.WriteByte(",\n"[c/(columns-1)])
				}
			}
			mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
			defer mem.AssertSize(t, 0)
			rr, err := ingest.NewRecordReader("wide.csv", strings.NewReader(b.String()), ingest.ReadOptions{Allocator: mem})
			if err != nil {
				t.Fatal(err)
			}
			defer rr.Release()
			rows := 0
			for rr.Next() {
				n := int(rr.RecordBatch().NumRows())
				if n > 1 && n*columns > 1<<19 {
					t.Fatalf("a batch of %d rows × %d columns", n, columns)
				}
				rows += n
			}
			if err := rr.Err(); err != nil || rows != 3 {
				t.Fatalf("%d rows, error %v", rows, err)
			}
		})
	}
	header := strings.Repeat("c,", ingest.MaxColumns) + "y\n1\n"
	_, err := ingest.ReadTable("wide.csv", strings.NewReader(header), ingest.ReadOptions{})
	if de := fixture.AsDataError(t, err); !strings.Contains(de.Error(), "MaxColumns") {
		t.Fatalf("error %v, want the MaxColumns cap", err)
	}
}

// TestReadCSVUnderflowWarning: a nonzero number too small for a float64
// reads as 0, as strconv.ParseFloat gives it (IEEE 754 rounding to
// nearest), and Collect warns once per column with a count and the first
// row; zeros written as zeros are not warned about.
func TestReadCSVUnderflowWarning(t *testing.T) {
	var warnings []*tabular.DataError
	opts := ingest.ReadOptions{Warn: func(w *tabular.DataError) { warnings = append(warnings, w) }}
	table := fixture.ReadCSVText(t, "in.csv", "x,z,y\n1,0,a\n1e-400,0e-400,b\n-2.5E-999,0.000,a\n4.9e-324,-0,b\n", opts)
	x := table.Column("x")
	// 4.9e-324 is the smallest subnormal float64 (IEEE 754 binary64), and
	// reads as itself.
	if x.Numbers[1] != 0 || x.Numbers[2] != 0 || x.Numbers[3] == 0 {
		t.Fatalf("x reads as %v", x.Numbers)
	}
	if len(warnings) != 1 {
		t.Fatalf("%d warnings, want 1: %v", len(warnings), warnings)
	}
	w := warnings[0]
	if w.File != "in.csv" || w.Row != 2 || w.Column != 1 || w.Name != "x" || !strings.Contains(w.Error(), "2 cells (first \"1e-400\")") {
		t.Fatalf("warning %v", w)
	}
}

// TestColumnNamesInvisible refuses names made only of white space or
// invisible characters (Unicode Default_Ignorable_Code_Point and White_Space,
// per the Unicode Character Database) and keeps names with any visible one.
func TestColumnNamesInvisible(t *testing.T) {
	for _, name := range []string{" ", "\t ", "\u00a0", "\u200b", "\u200d\u2060", "\ufeff", "\u3164", "\u2800", "\ufe0f"} {
		t.Run(fmt.Sprintf("%+q", name), func(t *testing.T) {
			_, err := ingest.ReadTable("in.csv", strings.NewReader("x,\""+name+"\",y\n1,2,a\n"), ingest.ReadOptions{})
			de := fixture.AsDataError(t, err)
			if de.Column != 2 || !strings.Contains(de.Error(), "only blank or invisible") || !strings.Contains(de.Error(), "\\u") && strings.TrimSpace(name) != "" {
				t.Fatalf("error %v", err)
			}
		})
	}
	for _, name := range []string{" x ", "é", "x\u200b", "温度", "\u00a0a"} {
		if _, err := ingest.ReadTable("in.csv", strings.NewReader("x,\""+name+"\",y\n1,2,a\n"), ingest.ReadOptions{}); err != nil {
			t.Errorf("%+q: %v", name, err)
		}
	}
}

// TestLongCellsCutInMessages: an error about a cell repeats its first 40
// characters and its length, not the cell.
func TestLongCellsCutInMessages(t *testing.T) {
	long := strings.Repeat("é", 500_000) // 1,000,000 bytes
	_, err := ingest.ReadTable("in.csv", strings.NewReader("x,y\n1,a\n2,b\n3,a\n"+long+",b\n"), ingest.ReadOptions{})
	de := fixture.AsDataError(t, err)
	want := fmt.Sprintf("%q… (1000000 bytes) is not a number", strings.Repeat("é", 40))
	if !strings.Contains(de.Error(), want) || len(de.Error()) > 400 {
		t.Fatalf("error of %d bytes: %.300s", len(de.Error()), de.Error())
	}
}

// TestArrowTypesRefusedFromSchema: a column of a type Collect cannot read
// is refused when the reader opens, from the schema, naming the column.
func TestArrowTypesRefusedFromSchema(t *testing.T) {
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	defer mem.AssertSize(t, 0)
	lb := array.NewListBuilder(mem, arrow.PrimitiveTypes.Int64)
	defer lb.Release()
	lb.Append(true)
	lb.ValueBuilder().(*array.Int64Builder).Append(1)
	list := lb.NewArray()
	defer list.Release()
	schema := arrow.NewSchema([]arrow.Field{{Name: "tags", Type: list.DataType(), Nullable: true}}, nil)
	rec := array.NewRecordBatch(schema, []arrow.Array{list}, 1)
	defer rec.Release()
	for _, w := range writers {
		t.Run(w.name, func(t *testing.T) {
			data := w.write(t, mem, rec, 1)
			rr, err := ingest.NewRecordReader("tags", bytes.NewReader(data), ingest.ReadOptions{Allocator: mem})
			if err == nil {
				rr.Release()
				t.Fatal("the reader opened")
			}
			de := fixture.AsDataError(t, err)
			if de.Column != 1 || de.Name != "tags" || !errors.Is(err, ingest.ErrUnsupported) || !strings.Contains(de.Error(), "list") {
				t.Fatalf("error %v", err)
			}
		})
	}
}
