package tableio

import (
	"encoding/binary"
	"errors"
)

// checkIPCBounds walks the footer of an Arrow IPC file and the metadata of
// its record batches and makes sure every length they claim fits inside
// the file, before the Arrow decoder allocates by those lengths: a damaged
// file claiming a vector of billions of fields would otherwise exhaust the
// memory, which no recover can catch. It reads the flatbuffers by hand,
// following the layout of the Arrow columnar format's File.fbs, Schema.fbs
// and Message.fbs (Apache Arrow specification, "IPC File Format"); slots
// are numbered as declared there.
func checkIPCBounds(data []byte) error {
	const magic = "ARROW1"
	n := len(data)
	if n < 2*len(magic)+4 || string(data[n-len(magic):]) != magic {
		return errors.New("no Arrow IPC file trailer")
	}
	footerLen := int(int32(binary.LittleEndian.Uint32(data[n-len(magic)-4:])))
	start := n - len(magic) - 4 - footerLen
	if footerLen <= 0 || start < 8 {
		return errors.New("the footer length does not fit the file")
	}
	fb := flatbuf(data[start : n-len(magic)-4])
	footer, ok := fb.root()
	if !ok {
		return errors.New("unreadable footer")
	}
	if schema, ok := fb.table(footer, 1); ok {
		if err := fb.checkFields(schema, 1, 0, new(int)); err != nil {
			return err
		}
	}
	for _, slot := range []int{2, 3} { // dictionaries, record batches: [Block]
		vec, count, ok := fb.vector(footer, slot, 24)
		if !ok {
			return errors.New("a block list of the footer does not fit the file")
		}
		for i := 0; i < count; i++ {
			b := vec + 24*i
			offset := int64(binary.LittleEndian.Uint64(fb[b:]))
			meta := int64(int32(binary.LittleEndian.Uint32(fb[b+8:])))
			body := int64(binary.LittleEndian.Uint64(fb[b+16:]))
			if offset < 0 || meta < 8 || body < 0 || offset > int64(n) || meta > int64(n) || body > int64(n) || offset+meta+body > int64(n) {
				return errors.New("a record batch lies outside the file")
			}
			if err := checkMessage(data[offset:offset+meta], body); err != nil {
				return err
			}
		}
	}
	return nil
}

// checkMessage checks the metadata of one record batch or dictionary
// batch: its node and buffer lists fit the metadata, and every buffer
// lies inside the body of bodyLen bytes.
func checkMessage(meta []byte, bodyLen int64) error {
	if binary.LittleEndian.Uint32(meta) == 0xFFFFFFFF { // continuation marker
		meta = meta[4:]
	}
	if len(meta) < 4 {
		return errors.New("a record batch has no metadata")
	}
	size := int(int32(binary.LittleEndian.Uint32(meta)))
	if size < 0 || size > len(meta)-4 {
		return errors.New("a record batch's metadata does not fit the file")
	}
	fb := flatbuf(meta[4 : 4+size])
	msg, ok := fb.root()
	if !ok {
		return errors.New("unreadable record batch metadata")
	}
	header, ok := fb.table(msg, 2)
	if !ok {
		return nil
	}
	batch := header
	switch fb.u8(msg, 1) { // header_type
	case 1: // Schema
		return fb.checkFields(header, 1, 0, new(int))
	case 2: // DictionaryBatch: its data is a RecordBatch
		if batch, ok = fb.table(header, 1); !ok {
			return nil
		}
	}
	if _, _, ok := fb.vector(batch, 1, 16); !ok { // nodes: [FieldNode]
		return errors.New("a record batch's node list does not fit the file")
	}
	vec, count, ok := fb.vector(batch, 2, 16) // buffers: [Buffer]
	if !ok {
		return errors.New("a record batch's buffer list does not fit the file")
	}
	for i := 0; i < count; i++ {
		off := int64(binary.LittleEndian.Uint64(fb[vec+16*i:]))
		length := int64(binary.LittleEndian.Uint64(fb[vec+16*i+8:]))
		if off < 0 || length < 0 || off > bodyLen || length > bodyLen-off {
			return errors.New("a buffer lies outside its record batch")
		}
	}
	return nil
}

// flatbuf is a flatbuffer read with every offset checked against its
// length.
type flatbuf []byte

func (b flatbuf) u32(pos int) (int, bool) {
	if pos < 0 || pos+4 > len(b) {
		return 0, false
	}
	return int(binary.LittleEndian.Uint32(b[pos:])), true
}

// root returns the position of the root table.
func (b flatbuf) root() (int, bool) {
	off, ok := b.u32(0)
	return off, ok && off < len(b)-4
}

// field returns the position of a table's field in slot, or false when the
// field is absent or the table's vtable does not fit.
func (b flatbuf) field(table, slot int) (int, bool) {
	so, ok := b.u32(table)
	if !ok {
		return 0, false
	}
	vt := table - int(int32(uint32(so)))
	if vt < 0 || vt+4 > len(b) {
		return 0, false
	}
	vtLen := int(binary.LittleEndian.Uint16(b[vt:]))
	entry := 4 + 2*slot
	if entry+2 > vtLen || vt+entry+2 > len(b) {
		return 0, false
	}
	off := int(binary.LittleEndian.Uint16(b[vt+entry:]))
	if off == 0 || table+off+4 > len(b) {
		return 0, false
	}
	return table + off, true
}

// u8 reads a one-byte field, 0 when absent.
func (b flatbuf) u8(table, slot int) byte {
	if p, ok := b.field(table, slot); ok {
		return b[p]
	}
	return 0
}

// table follows the offset in slot to a sub-table.
func (b flatbuf) table(table, slot int) (int, bool) {
	p, ok := b.field(table, slot)
	if !ok {
		return 0, false
	}
	off, _ := b.u32(p)
	t := p + off
	return t, t+4 <= len(b)
}

// vector returns the start and length of the vector in slot with elements
// of elem bytes; an absent vector is empty. False means it does not fit.
func (b flatbuf) vector(table, slot, elem int) (start, count int, ok bool) {
	p, present := b.field(table, slot)
	if !present {
		return 0, 0, true
	}
	off, _ := b.u32(p)
	v := p + off
	count, ok = b.u32(v)
	if !ok || count > (len(b)-v-4)/elem {
		return 0, 0, false
	}
	return v + 4, count, true
}

// checkFields checks the field list in slot of a Schema or Field table,
// and each field's children, to a bounded depth. Tables may be shared, so
// visited counts the fields seen and stops a crafted file from making the
// walk exponential: a real schema has fewer fields than the footer has
// bytes.
func (b flatbuf) checkFields(table, slot, depth int, visited *int) error {
	if depth > 64 {
		return errors.New("fields nest too deeply")
	}
	vec, count, ok := b.vector(table, slot, 4)
	if !ok {
		return errors.New("the field list does not fit the file")
	}
	for i := 0; i < count; i++ {
		if *visited++; *visited > len(b) {
			return errors.New("the schema lists more fields than the footer can hold")
		}
		off, _ := b.u32(vec + 4*i)
		f := vec + 4*i + off
		if f+4 > len(b) {
			return errors.New("a field lies outside the file")
		}
		if _, _, ok := b.vector(f, 0, 1); !ok { // name
			return errors.New("a field name does not fit the file")
		}
		if _, _, ok := b.vector(f, 6, 4); !ok { // custom_metadata
			return errors.New("a field's metadata does not fit the file")
		}
		if err := b.checkFields(f, 5, depth+1, visited); err != nil { // children
			return err
		}
	}
	return nil
}
