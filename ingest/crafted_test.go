package ingest

import (
	"bytes"
	"encoding/binary"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/compress"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"
)

var updateBad = flag.Bool("update-bad", false, "rewrite the crafted Arrow files of testdata/bad from their recipes")

// ipcMessage is one message of an Arrow IPC stream or file. Its slices
// alias the encoded bytes, so writing to them patches the input.
type ipcMessage struct {
	meta flatbuf
	body []byte
}

// ipcMessages splits encoded Arrow IPC data (a stream, or a file, whose
// messages follow its 8-byte magic) into its messages, up to the end marker.
func ipcMessages(t testing.TB, data []byte) []ipcMessage {
	t.Helper()
	pos := 0
	if bytes.HasPrefix(data, arrowFileMagic) {
		pos = 8
	}
	var msgs []ipcMessage
	for {
		if !bytes.Equal(data[pos:pos+4], arrowStreamMagic) {
			t.Fatalf("no continuation marker at byte %d", pos)
		}
		length := int(binary.LittleEndian.Uint32(data[pos+4:]))
		pos += 8
		if length == 0 {
			return msgs
		}
		meta := flatbuf(data[pos : pos+length])
		_, _, bodyLen, err := meta.message()
		if err != nil {
			t.Fatal(err)
		}
		pos += length
		msgs = append(msgs, ipcMessage{meta: meta, body: data[pos : pos+int(bodyLen)]})
		pos += int(bodyLen)
	}
}

// batchBuffer returns the bytes of buffer i of the record batch message m.
func (m ipcMessage) batchBuffer(t testing.TB, i int) []byte {
	t.Helper()
	_, header, _, err := m.meta.message()
	if err != nil {
		t.Fatal(err)
	}
	start, n, err := m.meta.vector(header, 2, 16)
	if err != nil || i >= n {
		t.Fatalf("no buffer %d (of %d): %v", i, n, err)
	}
	offset, _ := m.meta.i64(start + 16*i)
	size, _ := m.meta.i64(start + 16*i + 8)
	return m.body[offset : offset+size]
}

// batchVector returns the position of element i of the vector in field id
// of the record batch message m's header.
func (m ipcMessage) batchVector(t testing.TB, id, elemSize, i int) int {
	t.Helper()
	_, header, _, err := m.meta.message()
	if err != nil {
		t.Fatal(err)
	}
	start, n, err := m.meta.vector(header, id, elemSize)
	if err != nil || i >= n {
		t.Fatalf("no element %d (of %d) in field %d: %v", i, n, id, err)
	}
	return start + elemSize*i
}

// craftRecord is the table the crafted inputs start from: a float64 column
// x, a text column species, 4 rows.
func craftRecord(mem memory.Allocator, text arrow.DataType) arrow.RecordBatch {
	xb := array.NewFloat64Builder(mem)
	defer xb.Release()
	xb.AppendValues([]float64{5.1, 4.9, 7, 6.4}, nil)
	species := []string{"setosa", "setosa", "versicolor", "versicolor, a long label"}
	var sb array.Builder
	if text.ID() == arrow.STRING_VIEW {
		b := array.NewStringViewBuilder(mem)
		b.AppendValues(species, nil)
		sb = b
	} else {
		b := array.NewStringBuilder(mem)
		b.AppendValues(species, nil)
		sb = b
	}
	defer sb.Release()
	x, s := xb.NewArray(), sb.NewArray()
	defer x.Release()
	defer s.Release()
	schema := arrow.NewSchema([]arrow.Field{
		{Name: "x", Type: arrow.PrimitiveTypes.Float64, Nullable: true},
		{Name: "species", Type: text, Nullable: true},
	}, nil)
	return array.NewRecordBatch(schema, []arrow.Array{x, s}, 4)
}

// encodeCraft writes craftRecord as an Arrow IPC file or stream.
func encodeCraft(t testing.TB, file bool, text arrow.DataType, opts ...ipc.Option) []byte {
	t.Helper()
	rec := craftRecord(memory.DefaultAllocator, text)
	defer rec.Release()
	var buf bytes.Buffer
	opts = append(opts, ipc.WithSchema(rec.Schema()))
	if file {
		w, err := ipc.NewFileWriter(&buf, opts...)
		if err != nil {
			t.Fatal(err)
		}
		if err := w.Write(rec); err != nil {
			t.Fatal(err)
		}
		if err := w.Close(); err != nil {
			t.Fatal(err)
		}
		return buf.Bytes()
	}
	w := ipc.NewWriter(&buf, opts...)
	if err := w.Write(rec); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// A craftedCase is a hostile Arrow input of testdata/bad: the recipe that
// makes it from a well-formed file, and what reading it must say.
type craftedCase struct {
	file   string // name in testdata/bad
	recipe func(t testing.TB) []byte
	want   string // part of the error
}

var craftedCases = []craftedCase{
	{
		// The Zstandard-compressed values of x declare 2^40 bytes
		// decompressed; arrow-go would allocate them before decompressing.
		file: "arrow_zstd_1tib.arrows",
		recipe: func(t testing.TB) []byte {
			data := encodeCraft(t, false, arrow.BinaryTypes.String, ipc.WithZstd())
			binary.LittleEndian.PutUint64(ipcMessages(t, data)[1].batchBuffer(t, 1), 1<<40)
			return data
		},
		want: "claims 1099511627776",
	},
	{
		// The same with LZ4 frames, in the file format.
		file: "arrow_lz4_1tib.arrow",
		recipe: func(t testing.TB) []byte {
			data := encodeCraft(t, true, arrow.BinaryTypes.String, ipc.WithLZ4())
			binary.LittleEndian.PutUint64(ipcMessages(t, data)[1].batchBuffer(t, 1), 1<<40)
			return data
		},
		want: "claims 1099511627776",
	},
	{
		// Within the cap, but 64 MiB from a 50-byte frame: more than its
		// blocks can hold.
		file: "arrow_zstd_64mib.arrows",
		recipe: func(t testing.TB) []byte {
			data := encodeCraft(t, false, arrow.BinaryTypes.String, ipc.WithZstd())
			binary.LittleEndian.PutUint64(ipcMessages(t, data)[1].batchBuffer(t, 1), 64<<20)
			return data
		},
		want: "its frames can hold at most",
	},
	{
		// A Zstandard frame whose header asks for a 512 MiB window, which
		// the decoder would allocate.
		file: "arrow_zstd_window.arrows",
		recipe: func(t testing.TB) []byte {
			data := encodeCraft(t, false, arrow.BinaryTypes.String, ipc.WithZstd())
			frame := ipcMessages(t, data)[1].batchBuffer(t, 1)[8:]
			if frame[4]&0x20 != 0 {
				t.Fatal("the writer made a single-segment frame, which has no window descriptor")
			}
			frame[5] = 19 << 3 // window log 10+19
			return data
		},
		want: "window of 536870912 bytes",
	},
	{
		// A string_view column whose batch declares 2^32 variadic buffers;
		// arrow-go would allocate a list of that many. The schema is
		// refused before the batch is read.
		file: "arrow_string_view_2e32.arrows",
		recipe: func(t testing.TB) []byte {
			data := encodeCraft(t, false, arrow.BinaryTypes.StringView)
			m := ipcMessages(t, data)[1]
			binary.LittleEndian.PutUint64(m.meta[m.batchVector(t, 4, 8, 0):], 1<<32)
			return data
		},
		want: "unsupported input: Arrow type string_view",
	},
	{
		// A buffer that claims a terabyte of the body.
		file: "arrow_buffer_outside_body.arrows",
		recipe: func(t testing.TB) []byte {
			data := encodeCraft(t, false, arrow.BinaryTypes.String)
			m := ipcMessages(t, data)[1]
			binary.LittleEndian.PutUint64(m.meta[m.batchVector(t, 2, 16, 1)+8:], 1<<40)
			return data
		},
		want: "lies outside the batch's",
	},
	{
		// String offsets that go backwards: reading the cell would slice
		// past its bytes.
		file: "arrow_offsets_backwards.arrow",
		recipe: func(t testing.TB) []byte {
			data := encodeCraft(t, true, arrow.BinaryTypes.String)
			offsets := ipcMessages(t, data)[1].batchBuffer(t, 3)
			binary.LittleEndian.PutUint32(offsets[8:], 1000) // after row 2
			binary.LittleEndian.PutUint32(offsets[12:], 3)
			return data
		},
		want: "does not fit its own layout",
	},
	{
		// x's node claims 1000 rows, past its 32 bytes of values.
		file: "arrow_rows_past_buffers.arrows",
		recipe: func(t testing.TB) []byte {
			data := encodeCraft(t, false, arrow.BinaryTypes.String)
			m := ipcMessages(t, data)[1]
			binary.LittleEndian.PutUint64(m.meta[m.batchVector(t, 1, 16, 0):], 1000)
			return data
		},
		want: "does not fit its own layout",
	},
}

// parquetCraftCase is a Parquet file of 2^18 zeros in one Zstandard data
// page (about 2 MiB decompressed, so its size takes a 4-byte varint) whose
// page header then claims 120 MiB decompressed.
var parquetCraftCase = craftedCase{
	file: "parquet_page_120mib.parquet",
	recipe: func(t testing.TB) []byte {
		xb := array.NewFloat64Builder(memory.DefaultAllocator)
		defer xb.Release()
		xb.AppendValues(make([]float64, 1<<18), nil)
		x := xb.NewArray()
		defer x.Release()
		schema := arrow.NewSchema([]arrow.Field{{Name: "x", Type: arrow.PrimitiveTypes.Float64}}, nil)
		rec := array.NewRecordBatch(schema, []arrow.Array{x}, 1<<18)
		defer rec.Release()
		var buf bytes.Buffer
		props := parquet.NewWriterProperties(parquet.WithCompression(compress.Codecs.Zstd), parquet.WithDictionaryDefault(false),
			parquet.WithDataPageSize(8<<20), parquet.WithStats(false))
		w, err := pqarrow.NewFileWriter(schema, &buf, props, pqarrow.DefaultWriterProps())
		if err != nil {
			t.Fatal(err)
		}
		if err := w.Write(rec); err != nil {
			t.Fatal(err)
		}
		if err := w.Close(); err != nil {
			t.Fatal(err)
		}
		data := buf.Bytes()
		// The first page header follows "PAR1": field 1 (type, 0x15 and
		// a varint), then field 2 (uncompressed_page_size, 0x15 and a
		// zigzag varint); Thrift compact protocol.
		pos := 4
		if data[pos] != 0x15 {
			t.Fatalf("no page header at byte %d", pos)
		}
		for pos += 2; data[pos-1]&0x80 != 0; pos++ {
		}
		if data[pos] != 0x15 {
			t.Fatalf("no uncompressed_page_size at byte %d", pos)
		}
		varint := binary.AppendUvarint(nil, 2*(120<<20)) // zigzag
		if _, n := binary.Uvarint(data[pos+1:]); n != len(varint) {
			t.Fatalf("the page size takes %d bytes, not %d", n, len(varint))
		}
		copy(data[pos+1:], varint)
		return data
	},
	want: "exceeds configured limit 67108864",
}

func badPath(name string) string { return filepath.Join("..", "testdata", "bad", name) }

// TestCraftedFiles rebuilds each crafted input of testdata/bad from
// its recipe (with -update-bad, writes it) and reads it: the read must
// fail with the expected message, with no Go runtime text, every Arrow
// byte released and little memory allocated.
func TestCraftedFiles(t *testing.T) {
	for _, c := range append(craftedCases, parquetCraftCase) {
		t.Run(c.file, func(t *testing.T) {
			data := c.recipe(t)
			if *updateBad {
				if err := os.WriteFile(badPath(c.file), data, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			committed, err := os.ReadFile(badPath(c.file))
			if err != nil {
				t.Fatalf("%v (run go test ./ingest -run TestCraftedFiles -update-bad)", err)
			}
			if !bytes.Equal(committed, data) {
				t.Fatalf("testdata/bad/%s differs from its recipe (run with -update-bad)", c.file)
			}
			mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
			var before, after runtime.MemStats
			runtime.ReadMemStats(&before)
			_, err = ReadTable(c.file, bytes.NewReader(data), ReadOptions{Allocator: mem})
			runtime.ReadMemStats(&after)
			mem.AssertSize(t, 0)
			if err == nil {
				t.Fatal("read without an error")
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %q, want it to contain %q", err, c.want)
			}
			if strings.Contains(err.Error(), "runtime error") || strings.Contains(err.Error(), "out of range") {
				t.Errorf("error %q holds Go runtime text", err)
			}
			if !strings.HasPrefix(err.Error(), c.file+": ") {
				t.Errorf("error %q does not start with the file name", err)
			}
			if grew := after.TotalAlloc - before.TotalAlloc; grew > 16<<20 {
				t.Errorf("the read allocated %d MiB", grew>>20)
			}
		})
	}
}

// fuzzSeed is one committed seed of FuzzReadArrow or FuzzReadParquet.
type fuzzSeed struct {
	target, name string
	data         []byte
	batchRows    uint8
}

// fuzzSeeds are the seeds of the Arrow and Parquet fuzz targets:
// well-formed inputs in every layout the readers meet (file and stream,
// uncompressed, LZ4 and Zstandard buffers, a dictionary column; Parquet
// with each codec, dictionary pages and two row groups), and the crafted
// hostile inputs, so that mutations start next to every check.
func fuzzSeeds(t testing.TB) []fuzzSeed {
	var seeds []fuzzSeed
	for _, file := range []bool{false, true} {
		for codec, opt := range map[string][]ipc.Option{"plain": nil, "lz4": {ipc.WithLZ4()}, "zstd": {ipc.WithZstd()}} {
			layout := map[bool]string{false: "stream", true: "file"}[file]
			seeds = append(seeds, fuzzSeed{"FuzzReadArrow", layout + "_" + codec, encodeCraft(t, file, arrow.BinaryTypes.String, opt...), 3})
		}
	}
	seeds = append(seeds, fuzzSeed{"FuzzReadArrow", "stream_dictionary", encodeDictionary(t), 2})
	for _, c := range craftedCases {
		seeds = append(seeds, fuzzSeed{"FuzzReadArrow", "bad_" + strings.TrimSuffix(c.file, filepath.Ext(c.file)), c.recipe(t), 0})
	}
	for _, codec := range []compress.Compression{compress.Codecs.Uncompressed, compress.Codecs.Snappy, compress.Codecs.Gzip, compress.Codecs.Zstd, compress.Codecs.Lz4Raw} {
		for _, dictionary := range []bool{false, true} {
			name := fmt.Sprintf("%s_dictionary_%v", strings.ToLower(codec.String()), dictionary)
			seeds = append(seeds, fuzzSeed{"FuzzReadParquet", name, encodeParquet(t, codec, dictionary), 1})
		}
	}
	seeds = append(seeds, fuzzSeed{"FuzzReadParquet", "bad_parquet_page_120mib", parquetCraftCase.recipe(t), 0})
	return seeds
}

// encodeDictionary writes a stream whose text column is dictionary-encoded,
// so that it holds a dictionary batch.
func encodeDictionary(t testing.TB) []byte {
	mem := memory.DefaultAllocator
	db := array.NewDictionaryBuilder(mem, &arrow.DictionaryType{IndexType: arrow.PrimitiveTypes.Int8, ValueType: arrow.BinaryTypes.String}).(*array.BinaryDictionaryBuilder)
	defer db.Release()
	for _, s := range []string{"setosa", "versicolor", "setosa", "versicolor"} {
		if err := db.AppendString(s); err != nil {
			t.Fatal(err)
		}
	}
	species := db.NewArray()
	defer species.Release()
	rec := craftRecord(mem, arrow.BinaryTypes.String)
	defer rec.Release()
	schema := arrow.NewSchema([]arrow.Field{rec.Schema().Field(0), {Name: "species", Type: species.DataType(), Nullable: true}}, nil)
	out := array.NewRecordBatch(schema, []arrow.Array{rec.Column(0), species}, 4)
	defer out.Release()
	var buf bytes.Buffer
	w := ipc.NewWriter(&buf, ipc.WithSchema(schema))
	if err := w.Write(out); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// encodeParquet writes craftRecord as Parquet in two row groups.
func encodeParquet(t testing.TB, codec compress.Compression, dictionary bool) []byte {
	rec := craftRecord(memory.DefaultAllocator, arrow.BinaryTypes.String)
	defer rec.Release()
	var buf bytes.Buffer
	props := parquet.NewWriterProperties(parquet.WithCompression(codec), parquet.WithDictionaryDefault(dictionary))
	w, err := pqarrow.NewFileWriter(rec.Schema(), &buf, props, pqarrow.NewArrowWriterProperties(pqarrow.WithStoreSchema()))
	if err != nil {
		t.Fatal(err)
	}
	for _, rows := range [][2]int64{{0, 2}, {2, 4}} {
		part := rec.NewSlice(rows[0], rows[1])
		err := w.Write(part)
		part.Release()
		if err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// TestFuzzSeedsCommitted rebuilds the seeds of FuzzReadArrow and
// FuzzReadParquet (with -update-bad, writes them to testdata/fuzz) and
// checks that the committed corpus holds them.
func TestFuzzSeedsCommitted(t *testing.T) {
	for _, s := range fuzzSeeds(t) {
		path := filepath.Join("testdata", "fuzz", s.target, s.name)
		want := fmt.Sprintf("go test fuzz v1\n[]byte(%q)\nbyte(%q)\n", s.data, s.batchRows)
		if *updateBad {
			if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(path, []byte(want), 0o644); err != nil {
				t.Fatal(err)
			}
		}
		got, err := os.ReadFile(path)
		if err != nil || string(got) != want {
			t.Errorf("%s is missing or differs from its recipe (run go test ./ingest -run TestFuzzSeedsCommitted -update-bad): %v", path, err)
		}
	}
}
