package ingest_test

import (
	"bytes"
	"encoding/binary"
	"runtime"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"

	"deltafit/ingest"
	"deltafit/internal/fixture"
)

// irisWithMetadata is the Iris record with schema and field metadata, so
// that the flatbuffers hold every kind of vector the checks walk.
func irisWithMetadata(t *testing.T) arrow.RecordBatch {
	rec := tableRecord(t, memory.DefaultAllocator, fixture.ReadIris(t))
	t.Cleanup(rec.Release)
	fields := rec.Schema().Fields()
	for i := range fields {
		fields[i].Metadata = arrow.NewMetadata([]string{"unit"}, []string{"cm"})
	}
	md := arrow.NewMetadata([]string{"source"}, []string{"UCI iris"})
	out := array.NewRecordBatch(arrow.NewSchema(fields, &md), rec.Columns(), rec.NumRows())
	t.Cleanup(out.Release)
	return out
}

// readCorrupted reads data with the 4 bytes at pos replaced by a huge
// length. It must not panic, and it must not allocate anywhere near what a
// corrupt length asks for (the Arrow decoder allocates from metadata
// lengths before reading; without the bounds checks this runs out of
// memory, which no recover catches).
func readCorrupted(t *testing.T, data []byte, pos int) {
	corrupt := bytes.Clone(data)
	binary.LittleEndian.PutUint32(corrupt[pos:], 0x7fffffff)
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, _ = ingest.ReadTable("corrupt.arrow", bytes.NewReader(corrupt), ingest.ReadOptions{Format: ingest.FormatArrow})
	runtime.ReadMemStats(&after)
	if grew := after.TotalAlloc - before.TotalAlloc; grew > 256<<20 {
		t.Fatalf("a corrupt length at byte %d made the read allocate %d MiB", pos, grew>>20)
	}
}

// Every 4-byte window of the file's footer (the flatbuffer with the schema
// and the record blocks) is overwritten in turn with a huge length.
func TestArrowFileFooterLengthsAreChecked(t *testing.T) {
	data := writeArrowFile(t, memory.DefaultAllocator, irisWithMetadata(t), 50)
	end := len(data) - len("ARROW1") - 4
	size := int(binary.LittleEndian.Uint32(data[end:]))
	for pos := end - size; pos+4 <= end; pos++ {
		readCorrupted(t, data, pos)
	}
}

// Likewise for the schema message at the start of a stream.
func TestArrowStreamSchemaLengthsAreChecked(t *testing.T) {
	data := writeArrowStream(t, memory.DefaultAllocator, irisWithMetadata(t), 50)
	length := int(binary.LittleEndian.Uint32(data[4:]))
	for pos := 8; pos+4 <= 8+length; pos++ {
		readCorrupted(t, data, pos)
	}
}

// The checks accept what arrow-go itself writes.
func TestArrowCheckAcceptsWellFormedFiles(t *testing.T) {
	rec := irisWithMetadata(t)
	for name, data := range map[string][]byte{
		"file":   writeArrowFile(t, memory.DefaultAllocator, rec, 7),
		"stream": writeArrowStream(t, memory.DefaultAllocator, rec, 7),
	} {
		t.Run(name, func(t *testing.T) {
			table, err := ingest.ReadTable("iris.arrow", bytes.NewReader(data), ingest.ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			// UCI iris.names: 150 instances, 4 attributes and the class.
			if table.Rows != 150 || len(table.Columns) != 5 {
				t.Fatalf("%d rows, %d columns", table.Rows, len(table.Columns))
			}
		})
	}
}
