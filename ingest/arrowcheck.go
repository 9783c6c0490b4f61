package ingest

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
)

// The Arrow IPC decoder trusts the lengths written in a file's flatbuffer
// metadata and allocates from them before it reads anything: a few hundred
// bytes that claim a billion metadata entries exhaust memory, which no
// recover can catch. So before a schema or footer is handed to arrow-go,
// the checks below walk it and confirm that every table, vector and string
// lies inside the bytes it came in and that every record block lies inside
// the file. They check bounds only; arrow-go still decodes the contents.
//
// Layout references: the Arrow columnar format's IPC section (Schema.fbs,
// Message.fbs, File.fbs) and the FlatBuffers binary format.

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
// 3 (features).
func (b flatbuf) checkSchema(schema int) error {
	if err := b.tables(schema, 1, func(f int) error { return b.checkField(f, 1) }); err != nil {
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
func (b flatbuf) checkField(field, depth int) error {
	if depth > maxSchemaDepth {
		return fmt.Errorf("the Arrow schema nests fields more than %d deep", maxSchemaDepth)
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
	if err := b.tables(field, 5, func(child int) error { return b.checkField(child, depth+1) }); err != nil {
		return err
	}
	return b.keyValues(field, 6)
}

// checkArrowFile checks an Arrow IPC file's footer, schema and record
// block positions against the file's bytes.
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
	for _, id := range []int{2, 3} {
		start, n, err := footer.vector(root, id, 24)
		if err != nil {
			return err
		}
		for i := 0; i < n; i++ {
			block := footer[start+24*i:]
			offset := int64(binary.LittleEndian.Uint64(block))
			meta := int64(int32(binary.LittleEndian.Uint32(block[8:])))
			body := int64(binary.LittleEndian.Uint64(block[16:]))
			if offset < 0 || meta <= 0 || body < 0 || meta > int64(end) || body > int64(end) || offset > int64(end)-meta-body {
				return errors.New("an Arrow IPC record block lies outside the file; is it truncated?")
			}
		}
	}
	return footer.keyValues(root, 4)
}

// checkArrowStream checks the schema message at the start of an Arrow IPC
// stream and returns a reader that yields the whole stream again.
func checkArrowStream(br *bufio.Reader) (io.Reader, error) {
	prefix := 4
	head, err := br.Peek(8)
	if err != nil {
		return nil, fmt.Errorf("the Arrow IPC stream ends before its schema: %v", err)
	}
	length := int(int32(binary.LittleEndian.Uint32(head[4:])))
	if !bytes.Equal(head[:4], arrowStreamMagic) {
		prefix, length = 0, int(int32(binary.LittleEndian.Uint32(head))) // before format 0.15
	}
	if length <= 0 || length > maxArrowMetadataBytes {
		return nil, fmt.Errorf("the Arrow IPC stream's schema message claims %d bytes; is the input really Arrow?", length)
	}
	first := make([]byte, prefix+4+length)
	if _, err := io.ReadFull(br, first); err != nil {
		return nil, fmt.Errorf("the Arrow IPC stream ends inside its schema: %v", err)
	}
	msg := flatbuf(first[prefix+4:])
	root, err := msg.root()
	if err != nil {
		return nil, err
	}
	// Message: 1 header type (Schema is 1), 2 header.
	tag, err := msg.field(root, 1)
	if err != nil {
		return nil, err
	}
	if tag < 0 || msg[tag] != 1 {
		return nil, errors.New("the Arrow IPC stream does not start with a schema")
	}
	if err := msg.subtable(root, 2, msg.checkSchema); err != nil {
		return nil, err
	}
	if err := msg.keyValues(root, 4); err != nil {
		return nil, err
	}
	return io.MultiReader(bytes.NewReader(first), br), nil
}

// maxArrowMetadataBytes is arrow-go's own cap on one message's metadata.
const maxArrowMetadataBytes = 64 << 20
