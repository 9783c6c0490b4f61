package ingest_test

import (
	"bytes"
	"fmt"
	"io"
	"runtime"
	"slices"
	"strings"
	"testing"
	"testing/iotest"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"

	"deltafit/ingest"
	"deltafit/internal/fixture"
)

// writer writes a record in batches of the given number of rows into one
// encoded input.
type writer struct {
	name   string
	format ingest.Format
	write  func(t *testing.T, mem memory.Allocator, rec arrow.RecordBatch, batchRows int) []byte
}

var writers = []writer{
	{"arrow file", ingest.FormatArrow, withOptions(writeArrowFile)},
	{"arrow stream", ingest.FormatArrow, withOptions(writeArrowStream)},
	{"arrow file lz4", ingest.FormatArrow, withOptions(writeArrowFile, ipc.WithLZ4())},
	{"arrow stream zstd", ingest.FormatArrow, withOptions(writeArrowStream, ipc.WithZstd())},
	{"parquet", ingest.FormatParquet, writeParquet},
}

// withOptions gives an Arrow writer IPC options, such as a compression codec.
func withOptions(write func(*testing.T, memory.Allocator, arrow.RecordBatch, int, ...ipc.Option) []byte, opts ...ipc.Option) func(*testing.T, memory.Allocator, arrow.RecordBatch, int) []byte {
	return func(t *testing.T, mem memory.Allocator, rec arrow.RecordBatch, batchRows int) []byte {
		return write(t, mem, rec, batchRows, opts...)
	}
}

// eachSlice calls fn with consecutive slices of rec of at most n rows.
func eachSlice(t *testing.T, rec arrow.RecordBatch, n int, fn func(arrow.RecordBatch) error) {
	t.Helper()
	for lo := int64(0); lo < rec.NumRows(); lo += int64(n) {
		slice := rec.NewSlice(lo, min(lo+int64(n), rec.NumRows()))
		err := fn(slice)
		slice.Release()
		if err != nil {
			t.Fatal(err)
		}
	}
}

func writeArrowFile(t *testing.T, mem memory.Allocator, rec arrow.RecordBatch, batchRows int, opts ...ipc.Option) []byte {
	var buf bytes.Buffer
	w, err := ipc.NewFileWriter(&buf, append(opts, ipc.WithSchema(rec.Schema()), ipc.WithAllocator(mem))...)
	if err != nil {
		t.Fatal(err)
	}
	eachSlice(t, rec, batchRows, w.Write)
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func writeArrowStream(t *testing.T, mem memory.Allocator, rec arrow.RecordBatch, batchRows int, opts ...ipc.Option) []byte {
	var buf bytes.Buffer
	w := ipc.NewWriter(&buf, append(opts, ipc.WithSchema(rec.Schema()), ipc.WithAllocator(mem))...)
	eachSlice(t, rec, batchRows, w.Write)
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func writeParquet(t *testing.T, mem memory.Allocator, rec arrow.RecordBatch, batchRows int) []byte {
	var buf bytes.Buffer
	props := parquet.NewWriterProperties(parquet.WithAllocator(mem))
	w, err := pqarrow.NewFileWriter(rec.Schema(), &buf, props,
		pqarrow.NewArrowWriterProperties(pqarrow.WithStoreSchema(), pqarrow.WithAllocator(mem)))
	if err != nil {
		t.Fatal(err)
	}
	eachSlice(t, rec, batchRows, w.Write) // each Write starts a row group
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// TestReadFormatsRoundTrip writes the table read from CSV as Arrow IPC file,
// Arrow IPC stream and Parquet, in batches of 1, 7 and 4096 rows, and reads
// each back to the same table with every Arrow byte released.
func TestReadFormatsRoundTrip(t *testing.T) {
	sources := []struct {
		name string
		csv  string
	}{
		{"iris", string(fixture.IrisBytes())},
		{"iris with gaps", fixture.IrisWithGaps()},
	}
	for _, src := range sources {
		want := fixture.ReadCSVText(t, "in", src.csv, ingest.ReadOptions{})
		for _, w := range writers {
			for _, batchRows := range []int{1, 7, 4096} {
				for _, format := range []ingest.Format{ingest.FormatAuto, w.format} {
					name := fmt.Sprintf("%s/%s/batch %d/format %q", src.name, w.name, batchRows, format)
					t.Run(name, func(t *testing.T) {
						mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
						defer mem.AssertSize(t, 0)
						rec := tableRecord(t, mem, want)
						data := w.write(t, mem, rec, batchRows)
						rec.Release()
						got, err := ingest.ReadTable("in", bytes.NewReader(data),
							ingest.ReadOptions{Format: format, BatchRows: batchRows, Allocator: mem})
						if err != nil {
							t.Fatal(err)
						}
						requireTablesEqual(t, want, got)
					})
				}
			}
		}
	}
}

// TestReadCSVBatchRows reads the same CSV with batches of 1, 7 and 4096 rows
// to the same table, and the batches have the asked-for size.
func TestReadCSVBatchRows(t *testing.T) {
	for _, src := range []struct{ name, csv string }{
		{"iris", string(fixture.IrisBytes())},
		{"iris with gaps", fixture.IrisWithGaps()},
	} {
		want := fixture.ReadCSVText(t, "in", src.csv, ingest.ReadOptions{})
		for _, batchRows := range []int{1, 7, 4096} {
			t.Run(fmt.Sprintf("%s/batch %d", src.name, batchRows), func(t *testing.T) {
				mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
				defer mem.AssertSize(t, 0)
				opts := ingest.ReadOptions{BatchRows: batchRows, Allocator: mem}
				rr, err := ingest.NewRecordReader("in", strings.NewReader(src.csv), opts)
				if err != nil {
					t.Fatal(err)
				}
				var sizes []int64
				for rr.Next() {
					sizes = append(sizes, rr.RecordBatch().NumRows())
				}
				if err := rr.Err(); err != nil {
					t.Fatal(err)
				}
				rr.Release()
				for i, n := range sizes {
					if wantN := int64(min(batchRows, 150-i*batchRows)); n != wantN {
						t.Fatalf("batch %d has %d rows, want %d (sizes %v)", i+1, n, wantN, sizes)
					}
				}
				if wantBatches := (150 + batchRows - 1) / batchRows; len(sizes) != wantBatches {
					t.Fatalf("%d batches, want %d", len(sizes), wantBatches)
				}
				got, err := ingest.ReadTable("in", strings.NewReader(src.csv), opts)
				if err != nil {
					t.Fatal(err)
				}
				requireTablesEqual(t, want, got)
			})
		}
	}
}

// TestReadFromPipe reads inputs that cannot seek: a one-byte-at-a-time
// reader and an io.Pipe fed by a writer as the reader consumes it.
func TestReadFromPipe(t *testing.T) {
	want := fixture.ReadIris(t)
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	rec := tableRecord(t, mem, want)
	inputs := []struct {
		name string
		data []byte
	}{
		{"csv", fixture.IrisBytes()},
		{"arrow stream", writeArrowStream(t, mem, rec, 7)},
		{"arrow file, buffered first", writeArrowFile(t, mem, rec, 7)},
		{"parquet, buffered first", writeParquet(t, mem, rec, 7)},
	}
	rec.Release()
	mem.AssertSize(t, 0)
	sources := []struct {
		name string
		open func(data []byte) io.Reader
	}{
		{"one byte at a time", func(data []byte) io.Reader { return iotest.OneByteReader(bytes.NewReader(data)) }},
		{"io.Pipe", func(data []byte) io.Reader {
			pr, pw := io.Pipe()
			go func() {
				for len(data) > 0 { // in pieces, as a producer would
					n := min(len(data), 100)
					if _, err := pw.Write(data[:n]); err != nil {
						return
					}
					data = data[n:]
				}
				pw.Close()
			}()
			return pr
		}},
	}
	for _, in := range inputs {
		for _, src := range sources {
			t.Run(in.name+"/"+src.name, func(t *testing.T) {
				mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
				defer mem.AssertSize(t, 0)
				r := src.open(in.data)
				if _, ok := r.(io.Seeker); ok {
					t.Fatal("the source can seek")
				}
				got, err := ingest.ReadTable("-", r, ingest.ReadOptions{BatchRows: 7, Allocator: mem})
				if err != nil {
					t.Fatal(err)
				}
				requireTablesEqual(t, want, got)
			})
		}
	}
}

// TestReadFormatErrors covers inputs that are not what the format says.
func TestReadFormatErrors(t *testing.T) {
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	rec := tableRecord(t, mem, fixture.ReadIris(t))
	stream := writeArrowStream(t, mem, rec, 50)
	pq := writeParquet(t, mem, rec, 50)
	rec.Release()
	tests := []struct {
		name   string
		data   []byte
		format ingest.Format
	}{
		{"csv read as arrow", fixture.IrisBytes(), ingest.FormatArrow},
		{"csv read as parquet", fixture.IrisBytes(), ingest.FormatParquet},
		{"truncated arrow stream", stream[:len(stream)/2], ingest.FormatAuto},
		{"truncated parquet", pq[:len(pq)/2], ingest.FormatAuto},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var before, after runtime.MemStats
			runtime.ReadMemStats(&before)
			_, err := ingest.ReadTable("in", bytes.NewReader(tt.data), ingest.ReadOptions{Format: tt.format, Allocator: mem})
			runtime.ReadMemStats(&after)
			if err == nil {
				t.Fatal("got no error")
			}
			t.Log(err)
			// The first bytes of a non-Arrow input read as a message length
			// (1.6 GB for "sepa"); the reader must not allocate it.
			if grown := after.TotalAlloc - before.TotalAlloc; grown > 64<<20 {
				t.Errorf("reading allocated %d MiB", grown>>20)
			}
			if !strings.HasPrefix(err.Error(), "in: ") {
				t.Errorf("error %q does not start with the input name", err)
			}
		})
	}
	mem.AssertSize(t, 0)
}

func TestParseFormat(t *testing.T) {
	tests := []struct {
		in      string
		want    ingest.Format
		wantErr bool
	}{
		{"", ingest.FormatAuto, false},
		{"auto", ingest.FormatAuto, false},
		{"csv", ingest.FormatCSV, false},
		{"arrow", ingest.FormatArrow, false},
		{"parquet", ingest.FormatParquet, false},
		{"xlsx", "", true},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			got, err := ingest.ParseFormat(tt.in)
			if (err != nil) != tt.wantErr || got != tt.want {
				t.Fatalf("ParseFormat(%q) = %q, %v; want %q, error %v", tt.in, got, err, tt.want, tt.wantErr)
			}
			if err != nil && !strings.HasPrefix(err.Error(), "ingest: ") {
				t.Errorf("error %q does not start with the package name", err)
			}
		})
	}
}

// A float32 Arrow column reads as the decimal it was written from, as CSV
// would give it: 5.1f is 5.1, not 5.099999904632568 (IEEE 754 binary32
// holds about 7 significant decimal digits; common practice).
func TestFloat32ReadsAsItsDecimal(t *testing.T) {
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	defer mem.AssertSize(t, 0)
	b := array.NewFloat32Builder(mem)
	b.AppendValues([]float32{5.1, 0.2, 1e-7, 3.4028235e38}, nil)
	col := b.NewArray()
	b.Release()
	rec := array.NewRecordBatch(arrow.NewSchema([]arrow.Field{{Name: "x", Type: arrow.PrimitiveTypes.Float32}}, nil), []arrow.Array{col}, 4)
	col.Release()
	data := writeArrowStream(t, mem, rec, 4)
	rec.Release()
	table, err := ingest.ReadTable("f32.arrows", bytes.NewReader(data), ingest.ReadOptions{Allocator: mem})
	if err != nil {
		t.Fatal(err)
	}
	if got, want := table.Column("x").Numbers, []float64{5.1, 0.2, 1e-7, 3.4028235e38}; !slices.Equal(got, want) {
		t.Errorf("read %v, want %v", got, want)
	}
}
