package stream

import (
	"encoding/binary"
	"fmt"
	"io"

	flatbuffers "github.com/google/flatbuffers/go"
)

// Arrow IPC metadata is a flatbuffer. arrow/go/v17 trusts its vector
// lengths: schemaFromFB and fieldFromFB make a []arrow.Field of whatever
// length the schema claims (a 5 KB file made it allocate 715 MB under the
// fuzzer), and the file reader takes the footer's block sizes as given. The
// walk below checks the vectors arrow sizes allocations by, and the footer's
// blocks, against the bytes that are there. Table and field numbers follow
// the Arrow format's Schema.fbs, Message.fbs and File.fbs.

const maxFieldDepth = 64

// fbTable is a flatbuffer table with checked access.
type fbTable struct{ t flatbuffers.Table }

func fbRoot(b []byte) (fbTable, error) {
	if len(b) < 8 {
		return fbTable{}, corruptf("metadata of %d bytes is too short", len(b))
	}
	pos := flatbuffers.GetUOffsetT(b)
	if int64(pos)+4 > int64(len(b)) {
		return fbTable{}, corruptf("metadata root outside its %d bytes", len(b))
	}
	return fbTable{flatbuffers.Table{Bytes: b, Pos: pos}}, nil
}

func (t fbTable) field(i int) flatbuffers.UOffsetT {
	return flatbuffers.UOffsetT(t.t.Offset(flatbuffers.VOffsetT(4 + 2*i)))
}

// vector returns the start and length of vector field i with elements of
// elem bytes, checked against the buffer.
func (t fbTable) vector(i int, elem int64) (flatbuffers.UOffsetT, int, error) {
	o := t.field(i)
	if o == 0 {
		return 0, 0, nil
	}
	n := t.t.VectorLen(o)
	start := t.t.Vector(o)
	if n < 0 || int64(start)+int64(n)*elem > int64(len(t.t.Bytes)) {
		return 0, 0, corruptf("metadata vector claims %d items of %d bytes, %d bytes left", n, elem, int64(len(t.t.Bytes))-int64(start))
	}
	return start, n, nil
}

// table returns the table whose offset is stored at x.
func (t fbTable) table(x flatbuffers.UOffsetT) (fbTable, error) {
	pos := t.t.Indirect(x)
	if int64(pos)+4 > int64(len(t.t.Bytes)) {
		return fbTable{}, corruptf("metadata table outside its %d bytes", len(t.t.Bytes))
	}
	return fbTable{flatbuffers.Table{Bytes: t.t.Bytes, Pos: pos}}, nil
}

// sub returns table field i, or ok == false when it is absent.
func (t fbTable) sub(i int) (fbTable, bool, error) {
	o := t.field(i)
	if o == 0 {
		return fbTable{}, false, nil
	}
	s, err := t.table(t.t.Pos + o)
	return s, err == nil, err
}

// walkVectors checks plain vector fields given as (field, element size).
func (t fbTable) walkVectors(fields ...int64) error {
	for i := 0; i+1 < len(fields); i += 2 {
		if _, _, err := t.vector(int(fields[i]), fields[i+1]); err != nil {
			return err
		}
	}
	return nil
}

// walkSchema checks Schema.fields (1), custom_metadata (2) and features (3).
func walkSchema(s fbTable) error {
	if err := s.walkVectors(2, 4, 3, 8); err != nil {
		return err
	}
	return walkFields(s, 1, 0)
}

// walkFields checks the vector of Field tables in field i of t, recursively
// through Field.children (5), and each Field.custom_metadata (6).
func walkFields(t fbTable, i, depth int) error {
	if depth > maxFieldDepth {
		return corruptf("schema nested deeper than %d", maxFieldDepth)
	}
	start, n, err := t.vector(i, 4)
	if err != nil {
		return err
	}
	for j := range n {
		f, err := t.table(start + flatbuffers.UOffsetT(4*j))
		if err != nil {
			return err
		}
		if err := f.walkVectors(6, 4); err != nil {
			return err
		}
		if err := walkFields(f, 5, depth+1); err != nil {
			return err
		}
	}
	return nil
}

// walkRecordBatch checks RecordBatch.nodes (1), buffers (2) and
// variadicBufferCounts (4).
func walkRecordBatch(rb fbTable) error { return rb.walkVectors(1, 16, 2, 16, 4, 8) }

// checkMessage walks a Message flatbuffer: its custom_metadata (4) and its
// header (2) by header_type (1): 1 Schema, 2 DictionaryBatch, 3 RecordBatch.
func checkMessage(meta []byte) (err error) {
	defer func() {
		if p := recover(); p != nil {
			err = corruptf("unreadable message metadata")
		}
	}()
	m, err := fbRoot(meta)
	if err != nil {
		return err
	}
	if err := m.walkVectors(4, 4); err != nil {
		return err
	}
	var kind byte
	if o := m.field(1); o != 0 {
		kind = m.t.GetByte(m.t.Pos + o)
	}
	h, ok, err := m.sub(2)
	if err != nil || !ok {
		return err
	}
	switch kind {
	case 1:
		return walkSchema(h)
	case 2:
		rb, ok, err := h.sub(1)
		if err != nil || !ok {
			return err
		}
		return walkRecordBatch(rb)
	case 3:
		return walkRecordBatch(h)
	}
	return nil
}

// ipcBlock is a File.fbs Block: where a message lies in an IPC file.
type ipcBlock struct{ offset, meta, body int64 }

// checkArrowFile checks an Arrow IPC file of size bytes: the footer length,
// the footer's schema, every block's extent, and the message metadata of the
// dictionary blocks and of record batch unit (every record batch when unit
// is negative).
func checkArrowFile(fh io.ReaderAt, size int64, unit int) error {
	if err := checkArrowFileFooter(fh, size); err != nil {
		return err
	}
	var tail [4]byte
	if _, err := fh.ReadAt(tail[:], size-10); err != nil {
		return err
	}
	n := int64(binary.LittleEndian.Uint32(tail[:]))
	footerAt := size - 10 - n
	footer := make([]byte, n)
	if _, err := fh.ReadAt(footer, footerAt); err != nil {
		return err
	}
	var blocks []ipcBlock
	err := func() (err error) {
		defer func() {
			if p := recover(); p != nil {
				err = corruptf("unreadable file footer")
			}
		}()
		f, err := fbRoot(footer)
		if err != nil {
			return err
		}
		if err := f.walkVectors(4, 4); err != nil {
			return err
		}
		if s, ok, err := f.sub(1); err != nil {
			return err
		} else if ok {
			if err := walkSchema(s); err != nil {
				return err
			}
		}
		// Footer.dictionaries (2) and recordBatches (3): vectors of 24-byte Block structs
		// {offset int64, metaDataLength int32, padding, bodyLength int64}.
		for _, field := range []int{2, 3} {
			start, k, err := f.vector(field, 24)
			if err != nil {
				return err
			}
			for j := range k {
				if field == 3 && unit >= 0 && j != unit {
					continue
				}
				b := footer[int(start)+24*j:]
				blocks = append(blocks, ipcBlock{offset: int64(binary.LittleEndian.Uint64(b)),
					meta: int64(int32(binary.LittleEndian.Uint32(b[8:]))), body: int64(binary.LittleEndian.Uint64(b[16:]))})
			}
		}
		return nil
	}()
	if err != nil {
		return fmt.Errorf("footer: %w", err)
	}
	for _, b := range blocks {
		if b.offset < 8 || b.meta < 8 || b.body < 0 || b.offset > footerAt || b.meta > footerAt-b.offset || b.body > footerAt-b.offset-b.meta {
			return corruptf("block at %d claims %d+%d bytes, beyond the data part of the file (%d bytes)", b.offset, b.meta, b.body, footerAt)
		}
		meta := make([]byte, b.meta)
		if _, err := fh.ReadAt(meta, b.offset); err != nil {
			return err
		}
		prefix := 4
		if binary.LittleEndian.Uint32(meta) == ipcContinuation {
			prefix = 8
		}
		if err := checkMessage(meta[prefix:]); err != nil {
			return fmt.Errorf("block at %d: %w", b.offset, err)
		}
	}
	return nil
}
