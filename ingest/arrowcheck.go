package ingest

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"sync/atomic"

	"deltafit/ingest/tabular"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
)

// The Arrow IPC decoder trusts the lengths written in a file's flatbuffer
// metadata and allocates from them before it reads anything: a few hundred
// bytes that claim a billion metadata entries exhaust memory, which no
// recover can catch. So before a schema or footer is handed to arrow-go,
// the checks below walk it and confirm that every table, vector and string
// lies inside the bytes it came in, that every record block lies inside
// the file, and that every length a record batch declares (buffers, the
// decompressed length of a compressed buffer, variadic buffer counts) fits
// the bytes that are there and the caps of read.go. They check bounds and
// sizes only; arrow-go still decodes the contents.
//
// Layout references: the Arrow columnar format's IPC section (Schema.fbs,
// Message.fbs, File.fbs), the FlatBuffers binary format, the Zstandard
// frame format (RFC 8878) and the LZ4 frame format specification.

// errArrowLayout is wrapped by every bounds failure of the metadata.
var errArrowLayout = errors.New("the Arrow metadata points outside its own bytes")

// maxSchemaDepth caps the nesting of child fields (lists of structs ...).
const maxSchemaDepth = 64

// flatbuf is a bounds-checked view of one flatbuffer.
type flatbuf []byte

func (b flatbuf) u32(pos int) (int, error) {
	if pos < 0 || pos+4 > len(b) {
		return 0, errArrowLayout
	}
	return int(binary.LittleEndian.Uint32(b[pos:])), nil
}

func (b flatbuf) u8(pos int) (int, error) {
	if pos < 0 || pos >= len(b) {
		return 0, errArrowLayout
	}
	return int(b[pos]), nil
}

func (b flatbuf) i64(pos int) (int64, error) {
	if pos < 0 || pos+8 > len(b) {
		return 0, errArrowLayout
	}
	return int64(binary.LittleEndian.Uint64(b[pos:])), nil
}

// int64Field reads the scalar long in field id of table, def when absent.
func (b flatbuf) int64Field(table, id int, def int64) (int64, error) {
	pos, err := b.field(table, id)
	if err != nil || pos < 0 {
		return def, err
	}
	return b.i64(pos)
}

// uint8Field reads the scalar byte in field id of table, def when absent.
func (b flatbuf) uint8Field(table, id int, def int) (int, error) {
	pos, err := b.field(table, id)
	if err != nil || pos < 0 {
		return def, err
	}
	return b.u8(pos)
}

func (b flatbuf) u16(pos int) (int, error) {
	if pos < 0 || pos+2 > len(b) {
		return 0, errArrowLayout
	}
	return int(binary.LittleEndian.Uint16(b[pos:])), nil
}

// root returns the position of the root table.
func (b flatbuf) root() (int, error) { return b.u32(0) }

// field returns the position of field id of the table at pos, or -1 when
// the field is absent.
func (b flatbuf) field(table, id int) (int, error) {
	soffset, err := b.u32(table)
	if err != nil {
		return 0, err
	}
	vtable := table - int(int32(uint32(soffset)))
	vtSize, err := b.u16(vtable)
	if err != nil {
		return 0, err
	}
	tableSize, err := b.u16(vtable + 2)
	if err != nil {
		return 0, err
	}
	if 4+2*id+2 > vtSize {
		return -1, nil
	}
	off, err := b.u16(vtable + 4 + 2*id)
	if err != nil || off == 0 {
		return -1, err
	}
	if off >= tableSize || table+off >= len(b) {
		return 0, errArrowLayout
	}
	return table + off, nil
}

// indirect follows the unsigned offset stored at pos.
func (b flatbuf) indirect(pos int) (int, error) {
	off, err := b.u32(pos)
	if err != nil {
		return 0, err
	}
	if pos+off >= len(b) {
		return 0, errArrowLayout
	}
	return pos + off, nil
}

// vector returns the start and length of the vector in field id, checking
// that its elements of elemSize bytes fit; n is 0 for an absent field.
func (b flatbuf) vector(table, id, elemSize int) (start, n int, err error) {
	pos, err := b.field(table, id)
	if err != nil || pos < 0 {
		return 0, 0, err
	}
	vec, err := b.indirect(pos)
	if err != nil {
		return 0, 0, err
	}
	n, err = b.u32(vec)
	if err != nil {
		return 0, 0, err
	}
	start = vec + 4
	if n > (len(b)-start)/elemSize {
		return 0, 0, errArrowLayout
	}
	return start, n, nil
}

// tables calls check on every table of the vector of tables in field id.
func (b flatbuf) tables(table, id int, check func(int) error) error {
	start, n, err := b.vector(table, id, 4)
	if err != nil {
		return err
	}
	for i := 0; i < n; i++ {
		t, err := b.indirect(start + 4*i)
		if err != nil {
			return err
		}
		if err := check(t); err != nil {
			return err
		}
	}
	return nil
}

// subtable checks the table in field id, if present.
func (b flatbuf) subtable(table, id int, check func(int) error) error {
	pos, err := b.field(table, id)
	if err != nil || pos < 0 {
		return err
	}
	t, err := b.indirect(pos)
	if err != nil {
		return err
	}
	return check(t)
}

func (b flatbuf) keyValues(table, id int) error {
	return b.tables(table, id, func(kv int) error {
		for _, f := range []int{0, 1} { // key, value
			if _, _, err := b.vector(kv, f, 1); err != nil {
				return err
			}
		}
		return nil
	})
}

// checkSchema walks a Schema table: fields 1 (fields), 2 (custom_metadata),
// 3 (features). The walk counts every field it visits, nested ones too, and
// stops at MaxColumns: a field list may point at one field table any number
// of times, so a few megabytes can describe millions of fields, and arrow-go
// would build each one.
func (b flatbuf) checkSchema(schema int) error {
	fields := 0
	if err := b.tables(schema, 1, func(f int) error { return b.checkField(f, 1, &fields) }); err != nil {
		return err
	}
	if err := b.keyValues(schema, 2); err != nil {
		return err
	}
	_, _, err := b.vector(schema, 3, 8)
	return err
}

// unionType is the Type union's tag of the Union type, whose table holds
// the one vector among the types (typeIds).
const unionType = 14

// checkField walks a Field table: 0 name, 2 type tag, 3 type, 4 dictionary,
// 5 children, 6 custom_metadata.
func (b flatbuf) checkField(field, depth int, count *int) error {
	if depth > maxSchemaDepth {
		return fmt.Errorf("the Arrow schema nests fields more than %d deep", maxSchemaDepth)
	}
	if *count++; *count > MaxColumns {
		return fmt.Errorf("the Arrow schema has more than %d fields, the cap on columns", MaxColumns)
	}
	if _, _, err := b.vector(field, 0, 1); err != nil {
		return err
	}
	tagPos, err := b.field(field, 2)
	if err != nil {
		return err
	}
	err = b.subtable(field, 3, func(t int) error {
		if tagPos >= 0 && b[tagPos] == unionType {
			_, _, err := b.vector(t, 1, 4)
			return err
		}
		_, err := b.field(t, 0) // the type table's own header is in bounds
		return err
	})
	if err != nil {
		return err
	}
	if err := b.subtable(field, 4, func(t int) error { _, err := b.field(t, 0); return err }); err != nil {
		return err
	}
	if err := b.tables(field, 5, func(child int) error { return b.checkField(child, depth+1, count) }); err != nil {
		return err
	}
	return b.keyValues(field, 6)
}

// Message header types (Message.fbs, union MessageHeader).
const (
	headerSchema          = 1
	headerDictionaryBatch = 2
	headerRecordBatch     = 3
)

// message checks a Message table (0 version, 1 header type, 2 header,
// 3 body length, 4 custom metadata) and returns its header type, the
// position of the header table and the declared body length.
func (b flatbuf) message() (kind, header int, bodyLen int64, err error) {
	root, err := b.root()
	if err != nil {
		return 0, 0, 0, err
	}
	if kind, err = b.uint8Field(root, 1, 0); err != nil {
		return 0, 0, 0, err
	}
	pos, err := b.field(root, 2)
	if err != nil {
		return 0, 0, 0, err
	}
	if pos < 0 {
		return 0, 0, 0, errors.New("an Arrow IPC message has no header")
	}
	if header, err = b.indirect(pos); err != nil {
		return 0, 0, 0, err
	}
	if bodyLen, err = b.int64Field(root, 3, 0); err != nil {
		return 0, 0, 0, err
	}
	if bodyLen < 0 {
		return 0, 0, 0, fmt.Errorf("an Arrow IPC message declares a body of %d bytes", bodyLen)
	}
	return kind, header, bodyLen, b.keyValues(root, 4)
}

// checkBatchMessage checks a dictionary or record batch message against
// its body. A dictionary batch (0 id, 1 data, 2 isDelta) holds a record
// batch table; its data is checked the same way.
func (b flatbuf) checkBatchMessage(kind, header int, body []byte) error {
	switch kind {
	case headerRecordBatch:
		return b.checkBatch(header, body)
	case headerDictionaryBatch:
		pos, err := b.field(header, 1)
		if err != nil {
			return err
		}
		if pos < 0 {
			return errors.New("an Arrow IPC dictionary batch has no data")
		}
		data, err := b.indirect(pos)
		if err != nil {
			return err
		}
		return b.checkBatch(data, body)
	}
	return fmt.Errorf("an Arrow IPC message of type %d where a record or dictionary batch belongs", kind)
}

// Compression codecs and methods (Message.fbs, BodyCompression).
const (
	codecLZ4Frame = 0
	codecZstd     = 1
)

// checkBatch checks a RecordBatch table (0 length, 1 nodes, 2 buffers,
// 3 compression, 4 variadicBufferCounts) against its body: every node's
// length and null count are possible, every buffer lies inside the body,
// the variadic buffer counts add up to no more than the buffers there are,
// and each compressed buffer declares a decompressed length its frames can
// produce, all of them together within MaxArrowBodyBytes. arrow-go
// allocates a compressed buffer's declared length before decompressing, and
// a list of the variadic count before reading a buffer.
func (b flatbuf) checkBatch(rb int, body []byte) error {
	length, err := b.int64Field(rb, 0, 0)
	if err != nil {
		return err
	}
	if length < 0 {
		return fmt.Errorf("an Arrow record batch declares %d rows", length)
	}
	start, n, err := b.vector(rb, 1, 16) // FieldNode: length, null_count
	if err != nil {
		return err
	}
	for i := range n {
		rows, _ := b.i64(start + 16*i)
		nulls, _ := b.i64(start + 16*i + 8)
		if rows < 0 || nulls < 0 || nulls > rows {
			return fmt.Errorf("an Arrow record batch declares a column of %d rows with %d nulls", rows, nulls)
		}
	}
	start, nBuffers, err := b.vector(rb, 2, 16) // Buffer: offset, length
	if err != nil {
		return err
	}
	buffers := make([][]byte, nBuffers)
	for i := range nBuffers {
		offset, _ := b.i64(start + 16*i)
		size, _ := b.i64(start + 16*i + 8)
		if offset < 0 || size < 0 || offset > int64(len(body)) || size > int64(len(body))-offset {
			return fmt.Errorf("an Arrow record batch buffer of %d bytes at offset %d lies outside the batch's %d bytes; is the file truncated?", size, offset, len(body))
		}
		buffers[i] = body[offset : offset+size]
	}
	start, n, err = b.vector(rb, 4, 8)
	if err != nil {
		return err
	}
	variadic := int64(0)
	for i := range n {
		count, _ := b.i64(start + 8*i)
		if count < 0 || count > int64(nBuffers)-variadic {
			return fmt.Errorf("an Arrow record batch declares %d variadic buffers but holds %d buffers in all", count, nBuffers)
		}
		variadic += count
	}
	pos, err := b.field(rb, 3)
	if err != nil || pos < 0 {
		return err
	}
	compression, err := b.indirect(pos)
	if err != nil {
		return err
	}
	codec, err := b.uint8Field(compression, 0, codecLZ4Frame)
	if err != nil {
		return err
	}
	method, err := b.uint8Field(compression, 1, 0)
	if err != nil {
		return err
	}
	if method != 0 || (codec != codecLZ4Frame && codec != codecZstd) {
		return fmt.Errorf("%w: Arrow body compression codec %d, method %d (LZ4 frames and Zstandard are read)", ErrUnsupported, codec, method)
	}
	return checkCompressedBuffers(codec, buffers)
}

// checkCompressedBuffers checks the buffers of a compressed record batch:
// each starts with its decompressed length as an int64 (-1 for a buffer
// stored as is), which must be no more than its frames can produce, and
// the decompressed lengths together at most MaxArrowBodyBytes.
func checkCompressedBuffers(codec int, buffers [][]byte) error {
	total := int64(0)
	for _, buf := range buffers {
		if len(buf) == 0 {
			continue
		}
		if len(buf) < 8 {
			return fmt.Errorf("a compressed Arrow buffer of %d bytes is shorter than its 8-byte length prefix", len(buf))
		}
		declared := int64(binary.LittleEndian.Uint64(buf))
		if declared == -1 {
			continue
		}
		if declared < 0 || declared > MaxArrowBodyBytes {
			return fmt.Errorf("a compressed Arrow buffer claims %d bytes decompressed, over the cap of %d on a record batch (MaxArrowBodyBytes)",
				uint64(declared), int64(MaxArrowBodyBytes))
		}
		if declared > MaxArrowBodyBytes-total {
			return fmt.Errorf("the compressed buffers of an Arrow record batch claim more than %d bytes decompressed, the cap on a record batch (MaxArrowBodyBytes)",
				int64(MaxArrowBodyBytes))
		}
		total += declared
		var most int64
		var err error
		if codec == codecZstd {
			most, err = zstdBound(buf[8:], declared)
		} else {
			most, err = lz4Bound(buf[8:])
		}
		if err != nil {
			return err
		}
		if declared > most {
			return fmt.Errorf("a compressed Arrow buffer of %d bytes claims %d bytes decompressed; its frames can hold at most %d", len(buf)-8, declared, most)
		}
	}
	return nil
}

// zstdMaxWindow caps the window a Zstandard frame may ask its decoder to
// allocate, unless the frame is a single segment no larger than the
// buffer it decodes to. Writers use 8 MiB or less by default.
const zstdMaxWindow = 8 << 20

// zstdBound walks the Zstandard frames of data (RFC 8878, section 3.1) and
// returns the most bytes they can decompress to: raw and RLE blocks give
// their stated size, compressed blocks at most 128 KiB each. A frame whose
// window or content size is more than the decoder should allocate for a
// buffer of declared bytes is an error.
func zstdBound(data []byte, declared int64) (int64, error) {
	bad := func(what string) (int64, error) {
		return 0, fmt.Errorf("a Zstandard-compressed Arrow buffer is malformed: %s", what)
	}
	const blockMax = 128 << 10
	most := int64(0)
	for len(data) > 0 {
		if len(data) < 4 {
			return bad("a frame is cut short")
		}
		magic := binary.LittleEndian.Uint32(data)
		if magic&0xfffffff0 == 0x184d2a50 { // skippable frame
			if len(data) < 8 {
				return bad("a skippable frame is cut short")
			}
			size := int64(binary.LittleEndian.Uint32(data[4:]))
			if size > int64(len(data)-8) {
				return bad("a skippable frame runs past the buffer")
			}
			data = data[8+size:]
			continue
		}
		if magic != 0xfd2fb528 {
			return bad("no frame magic number")
		}
		if len(data) < 5 {
			return bad("a frame header is cut short")
		}
		descriptor := data[4]
		singleSegment := descriptor&0x20 != 0
		checksum := descriptor&0x04 != 0
		pos := 5
		window := int64(0)
		if !singleSegment {
			if pos >= len(data) {
				return bad("a frame header is cut short")
			}
			exponent, mantissa := int64(data[pos]>>3), int64(data[pos]&7)
			base := int64(1) << (10 + exponent)
			window = base + base/8*mantissa
			pos++
		}
		pos += []int{0, 1, 2, 4}[descriptor&3] // dictionary id
		fcsSize := []int{0, 2, 4, 8}[descriptor>>6]
		if fcsSize == 0 && singleSegment {
			fcsSize = 1
		}
		if pos+fcsSize > len(data) {
			return bad("a frame header is cut short")
		}
		switch fcsSize {
		case 1:
			window = int64(data[pos])
		case 2:
			window = int64(binary.LittleEndian.Uint16(data[pos:])) + 256
		case 4:
			if singleSegment {
				window = int64(binary.LittleEndian.Uint32(data[pos:]))
			}
		case 8:
			if singleSegment {
				window = int64(binary.LittleEndian.Uint64(data[pos:]))
			}
		}
		pos += fcsSize
		if window < 0 || (window > zstdMaxWindow && !(singleSegment && window <= declared)) {
			return bad(fmt.Sprintf("a frame asks for a window of %d bytes", uint64(window)))
		}
		for last := false; !last; {
			if pos+3 > len(data) {
				return bad("a block header is cut short")
			}
			header := int(data[pos]) | int(data[pos+1])<<8 | int(data[pos+2])<<16
			pos += 3
			last = header&1 != 0
			size := header >> 3
			switch (header >> 1) & 3 {
			case 0: // raw
				most += int64(size)
			case 1: // RLE: one byte repeated size times
				most += int64(size)
				size = 1
			case 2:
				most += blockMax
			default:
				return bad("a reserved block type")
			}
			if size > len(data)-pos {
				return bad("a block runs past the buffer")
			}
			pos += size
		}
		if checksum {
			pos += 4
		}
		if pos > len(data) {
			return bad("a frame checksum is cut short")
		}
		data = data[pos:]
	}
	return most, nil
}

// lz4Bound walks the LZ4 frames of data (LZ4 frame format 1.6.x) and
// returns the most bytes they can decompress to: stored blocks give their
// size, compressed blocks at most the frame's block maximum, which is also
// what the decoder allocates (4 MiB at most).
func lz4Bound(data []byte) (int64, error) {
	bad := func(what string) (int64, error) {
		return 0, fmt.Errorf("an LZ4-compressed Arrow buffer is malformed: %s", what)
	}
	most := int64(0)
	for len(data) > 0 {
		if len(data) < 7 {
			return bad("a frame header is cut short")
		}
		if binary.LittleEndian.Uint32(data) != 0x184d2204 {
			return bad("no frame magic number")
		}
		flags, bd := data[4], data[5]
		if flags>>6 != 1 {
			return bad("an unknown frame version")
		}
		blockMax := int64(0)
		switch (bd >> 4) & 7 {
		case 4:
			blockMax = 64 << 10
		case 5:
			blockMax = 256 << 10
		case 6:
			blockMax = 1 << 20
		case 7:
			blockMax = 4 << 20
		default:
			return bad("an unknown block size")
		}
		pos := 6
		if flags&0x08 != 0 { // content size
			pos += 8
		}
		if flags&0x01 != 0 { // dictionary id
			pos += 4
		}
		pos++ // header checksum
		blockChecksum := flags&0x10 != 0
		for {
			if pos+4 > len(data) {
				return bad("a block header is cut short")
			}
			word := binary.LittleEndian.Uint32(data[pos:])
			pos += 4
			if word == 0 { // end mark
				break
			}
			size := int64(word & 0x7fffffff)
			if size > blockMax {
				return bad("a block is larger than the frame's block size")
			}
			if word&0x80000000 != 0 { // stored
				most += size
			} else {
				most += blockMax
			}
			if blockChecksum {
				size += 4
			}
			if size > int64(len(data)-pos) {
				return bad("a block runs past the buffer")
			}
			pos += int(size)
		}
		if flags&0x04 != 0 { // content checksum
			pos += 4
		}
		if pos > len(data) {
			return bad("a frame checksum is cut short")
		}
		data = data[pos:]
	}
	return most, nil
}

// checkArrowFile checks an Arrow IPC file's footer and schema against the
// file's bytes, and every dictionary and record batch block, message and
// body, before arrow-go reads any of them.
func checkArrowFile(data []byte) error {
	const magic = len("ARROW1")
	if len(data) < 2*magic+4 || !bytes.Equal(data[len(data)-magic:], arrowFileMagic) {
		return errors.New("the Arrow IPC file has no closing ARROW1 marker; is it truncated?")
	}
	size := int(int32(binary.LittleEndian.Uint32(data[len(data)-magic-4:])))
	end := len(data) - magic - 4
	if size <= 0 || size > end-magic {
		return errors.New("the Arrow IPC file's footer length is impossible; is it truncated?")
	}
	footer := flatbuf(data[end-size : end])
	root, err := footer.root()
	if err != nil {
		return err
	}
	if err := footer.subtable(root, 1, footer.checkSchema); err != nil {
		return err
	}
	// Blocks (dictionaries, record batches): offset int64, metadata length
	// int32, 4 bytes of padding, body length int64.
	for _, blocks := range []struct{ id, kind int }{{2, headerDictionaryBatch}, {3, headerRecordBatch}} {
		start, n, err := footer.vector(root, blocks.id, 24)
		if err != nil {
			return err
		}
		for i := range n {
			block := footer[start+24*i:]
			offset := int64(binary.LittleEndian.Uint64(block))
			meta := int64(int32(binary.LittleEndian.Uint32(block[8:])))
			body := int64(binary.LittleEndian.Uint64(block[16:]))
			if offset < 0 || meta <= 0 || body < 0 || meta > int64(end) || body > int64(end) || offset > int64(end)-meta-body {
				return errors.New("an Arrow IPC record block lies outside the file; is it truncated?")
			}
			if err := checkFileBlock(data[offset:offset+meta], data[offset+meta:offset+meta+body], blocks.kind); err != nil {
				return err
			}
		}
	}
	return footer.keyValues(root, 4)
}

// checkFileBlock checks the message of one block of an Arrow IPC file:
// its metadata (after the continuation marker and length) and its body.
func checkFileBlock(meta, body []byte, want int) error {
	prefix := 4
	if len(meta) >= 4 && bytes.Equal(meta[:4], arrowStreamMagic) {
		prefix = 8
	}
	if len(meta) < prefix+4 {
		return errArrowLayout
	}
	length := int(int32(binary.LittleEndian.Uint32(meta[prefix-4:])))
	if length <= 0 || length > len(meta)-prefix {
		return errArrowLayout
	}
	msg := flatbuf(meta[prefix : prefix+length])
	kind, header, bodyLen, err := msg.message()
	if err != nil {
		return err
	}
	if kind != want {
		return fmt.Errorf("an Arrow IPC file block holds a message of type %d where type %d belongs", kind, want)
	}
	if bodyLen != int64(len(body)) {
		return fmt.Errorf("an Arrow IPC message declares a body of %d bytes but its block holds %d", bodyLen, len(body))
	}
	return msg.checkBatchMessage(kind, header, body)
}

// checkedMessageReader reads the messages of an Arrow IPC stream for
// ipc.NewReaderFromMessageReader, checking each before arrow-go sees it:
// the first must be a schema, which checkSchema walks, and every later
// one a dictionary or record batch, which checkBatchMessage checks with
// its body. Metadata and body are read as their bytes arrive, never
// allocated from a declared length, so a stream that claims a gigabyte
// and holds a few bytes costs a few bytes.
type checkedMessageReader struct {
	r    io.Reader
	refs atomic.Int64
	msg  *ipc.Message // the last message, released by the next call
	read int          // messages read so far
	err  error        // the first error other than the end of the stream
}

func newCheckedMessageReader(r io.Reader) *checkedMessageReader {
	mr := &checkedMessageReader{r: r}
	mr.refs.Add(1)
	return mr
}

func (r *checkedMessageReader) Retain() { r.refs.Add(1) }

func (r *checkedMessageReader) Release() {
	if r.refs.Add(-1) == 0 && r.msg != nil {
		r.msg.Release()
		r.msg = nil
	}
}

// Message returns the next message, or io.EOF at the end of the stream.
func (r *checkedMessageReader) Message() (*ipc.Message, error) {
	if r.msg != nil {
		r.msg.Release()
		r.msg = nil
	}
	msg, err := r.next()
	if err != nil {
		if r.read == 0 && !errors.Is(err, io.EOF) {
			err = fmt.Errorf("not a readable Arrow IPC stream: %w", err)
		}
		if r.err == nil && !errors.Is(err, io.EOF) {
			r.err = err
		}
		return nil, err
	}
	r.read++
	r.msg = msg
	return msg, nil
}

func (r *checkedMessageReader) next() (*ipc.Message, error) {
	var word [4]byte
	if _, err := io.ReadFull(r.r, word[:]); err != nil {
		if r.read > 0 && errors.Is(err, io.EOF) {
			return nil, io.EOF // a stream may end without its end marker
		}
		return nil, r.cut(err, "a message")
	}
	length := int64(int32(binary.LittleEndian.Uint32(word[:])))
	if bytes.Equal(word[:], arrowStreamMagic) {
		if _, err := io.ReadFull(r.r, word[:]); err != nil {
			return nil, r.cut(err, "a message")
		}
		length = int64(int32(binary.LittleEndian.Uint32(word[:])))
	} // else a stream from before format 0.15, without the marker
	if length == 0 {
		if r.read == 0 {
			return nil, errors.New("the Arrow IPC stream ends before its schema")
		}
		return nil, io.EOF
	}
	if length < 0 || length > maxArrowMetadataBytes {
		return nil, fmt.Errorf("an Arrow IPC message claims %d bytes of metadata, over the cap of %d; is the input really Arrow?", length, maxArrowMetadataBytes)
	}
	meta, err := readDeclared(r.r, length)
	if err != nil {
		return nil, r.cut(err, "a message's metadata")
	}
	msg := flatbuf(meta)
	kind, header, bodyLen, err := msg.message()
	if err != nil {
		return nil, err
	}
	if r.read == 0 {
		if kind != headerSchema {
			return nil, errors.New("the Arrow IPC stream does not start with a schema")
		}
		if err := msg.checkSchema(header); err != nil {
			return nil, err
		}
	}
	if bodyLen > MaxArrowBodyBytes {
		return nil, fmt.Errorf("an Arrow IPC message claims a body of %d bytes, over the cap of %d (MaxArrowBodyBytes); write the data in smaller batches", bodyLen, int64(MaxArrowBodyBytes))
	}
	body, err := readDeclared(r.r, bodyLen)
	if err != nil {
		return nil, r.cut(err, "a message's body")
	}
	if r.read > 0 {
		if err := msg.checkBatchMessage(kind, header, body); err != nil {
			return nil, err
		}
	}
	return ipc.NewMessage(memory.NewBufferBytes(meta), memory.NewBufferBytes(body)), nil
}

// cut describes a read that ended early.
func (r *checkedMessageReader) cut(err error, what string) error {
	if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
		return fmt.Errorf("the Arrow IPC stream ends inside %s; is it truncated?", what)
	}
	return err
}

// readDeclared reads n bytes that r claims to hold, growing the buffer as
// they arrive rather than allocating n up front.
func readDeclared(r io.Reader, n int64) ([]byte, error) {
	var buf bytes.Buffer
	buf.Grow(int(min(n, 64<<10)))
	got, err := buf.ReadFrom(io.LimitReader(r, n))
	if err != nil {
		return nil, err
	}
	if got < n {
		return nil, io.ErrUnexpectedEOF
	}
	return buf.Bytes(), nil
}

// maxArrowMetadataBytes is arrow-go's own cap on one message's metadata.
const maxArrowMetadataBytes = 64 << 20

// checkArrowTypes refuses a schema with a column deltafit cannot read,
// before any record batch is read: nested and view types, among others,
// make arrow-go allocate from lengths in each batch, and their cells would
// be refused anyway.
func checkArrowTypes(schema *arrow.Schema) error {
	if n := schema.NumFields(); n > MaxColumns {
		return fmt.Errorf("the table has %d columns, over the cap of %d (MaxColumns)", n, MaxColumns)
	}
	for i, f := range schema.Fields() {
		if !readableType(f.Type) {
			return &tabular.DataError{Column: i + 1, Name: f.Name,
				Err: fmt.Errorf("%w: Arrow type %s; convert the column to numbers, text or booleans", ErrUnsupported, f.Type)}
		}
	}
	return nil
}

// readableType reports whether Collect reads columns of type dt: text,
// numbers and booleans, and dictionaries of them.
func readableType(dt arrow.DataType) bool {
	switch dt.ID() {
	case arrow.STRING, arrow.LARGE_STRING, arrow.BOOL,
		arrow.FLOAT16, arrow.FLOAT32, arrow.FLOAT64,
		arrow.INT8, arrow.INT16, arrow.INT32, arrow.INT64,
		arrow.UINT8, arrow.UINT16, arrow.UINT32, arrow.UINT64:
		return true
	case arrow.DICTIONARY:
		value := dt.(*arrow.DictionaryType).ValueType
		return value.ID() != arrow.DICTIONARY && readableType(value)
	}
	return false
}
