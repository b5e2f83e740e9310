package stream

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math/bits"

	"github.com/apache/arrow/go/v17/arrow/ipc"
	"github.com/apache/arrow/go/v17/arrow/memory"
	"github.com/klauspost/compress/snappy"
	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/encoding/thrift"
	"github.com/parquet-go/parquet-go/format"
)

// Guards against hostile files. The decoding libraries trust the sizes a file
// claims: parquet-go allocates a Thrift list of whatever length the footer
// states (a few bytes claiming billions of row groups end the process with
// "out of memory", which no recover catches) and a page buffer of whatever
// size a page header states; arrow's IPC stream reader allocates the metadata
// and body lengths a message states. The checks below compare every claimed
// length with the bytes that are really there, and bound what may be
// allocated for decompressed data, before the libraries see the file.

// ErrCorruptFile means a file's framing claims more bytes, items or values
// than the file holds or the memory bound allows.
var ErrCorruptFile = errors.New("stream: corrupt file")

const (
	// maxThriftDepth bounds the nesting of Thrift structures in a footer or
	// page header (the real ones nest less than ten deep).
	maxThriftDepth = 64
	// pageRatio is the largest compression ratio trusted beyond minPageBound.
	pageRatio = 64
	// maxPageHeader bounds the size of one Parquet page header.
	maxPageHeader = 16 << 20
)

// The page bounds are variables only so that the fuzz tests can lower them (export_test.go): at
// their production values a hostile page may cost a few hundred MiB before it fails, which is
// within the memory bound but makes each fuzz execution take seconds.
var (
	// minPageBound is the uncompressed size any page may claim, whatever its
	// compressed size.
	minPageBound int64 = 256 << 20
	// maxPageValues bounds the values (nulls included) of one Parquet page.
	maxPageValues int64 = 1 << 24
)

func corruptf(format string, args ...any) error {
	return fmt.Errorf("%w: "+format, append([]any{ErrCorruptFile}, args...)...)
}

// checkThrift walks one Thrift compact-protocol struct at the start of b
// without decoding it and returns its length in bytes. Every list, set, map
// and binary length is checked against the bytes that remain (each item takes
// at least one byte), so that decoding it afterwards allocates at most in
// proportion to len(b).
func checkThrift(b []byte) (int, error) {
	r := new(thrift.CompactProtocol).NewReaderFromBytes(b)
	if err := walkStruct(r, len(b), 0); err != nil {
		return 0, err
	}
	return r.BytesRead(), nil
}

func walkStruct(r thrift.Reader, size, depth int) error {
	if depth > maxThriftDepth {
		return corruptf("metadata nested deeper than %d", maxThriftDepth)
	}
	for {
		f, err := r.ReadField()
		if err != nil {
			return err
		}
		switch f.Type {
		case thrift.STOP:
			return nil
		case thrift.TRUE, thrift.FALSE: // the value is in the field header
			continue
		}
		if err := walkValue(r, f.Type, size, depth+1); err != nil {
			return err
		}
	}
}

func walkItems(r thrift.Reader, n int32, typ thrift.Type, size, depth int) error {
	if n < 0 || int(n) > size-r.BytesRead() {
		return corruptf("metadata claims %d items with %d bytes left", n, size-r.BytesRead())
	}
	for range n {
		if err := walkValue(r, typ, size, depth); err != nil {
			return err
		}
	}
	return nil
}

func walkValue(r thrift.Reader, typ thrift.Type, size, depth int) error {
	var err error
	switch typ {
	case thrift.TRUE, thrift.FALSE:
		_, err = r.ReadBool()
	case thrift.I8:
		_, err = r.ReadInt8()
	case thrift.I16:
		_, err = r.ReadInt16()
	case thrift.I32:
		_, err = r.ReadInt32()
	case thrift.I64:
		_, err = r.ReadInt64()
	case thrift.DOUBLE:
		_, err = r.ReadFloat64()
	case thrift.BINARY:
		_, err = r.ReadBytes() // a sub-slice, bounds-checked by the reader
	case thrift.UUID:
		for i := 0; i < 16 && err == nil; i++ {
			_, err = r.ReadInt8()
		}
	case thrift.STRUCT:
		err = walkStruct(r, size, depth)
	case thrift.LIST, thrift.SET:
		var l thrift.List
		if l, err = r.ReadList(); err == nil {
			err = walkItems(r, l.Size, l.Type, size, depth+1)
		}
	case thrift.MAP:
		var m thrift.Map
		if m, err = r.ReadMap(); err == nil {
			if m.Size < 0 || int(m.Size) > size-r.BytesRead() {
				return corruptf("metadata claims a map of %d entries with %d bytes left", m.Size, size-r.BytesRead())
			}
			for i := int32(0); i < m.Size && err == nil; i++ {
				if err = walkValue(r, m.Key, size, depth+1); err == nil {
					err = walkValue(r, m.Value, size, depth+1)
				}
			}
		}
	default:
		err = corruptf("unknown Thrift type %d in metadata", typ)
	}
	return err
}

// checkParquetFooter checks that the footer length fits in the file and that
// the footer's lists claim no more items than it has bytes. It returns the
// offset where the footer starts.
func checkParquetFooter(fh io.ReaderAt, size int64) (int64, error) {
	if size < 12 {
		return 0, corruptf("%d bytes is too small for a Parquet file", size)
	}
	var tail [8]byte
	if _, err := fh.ReadAt(tail[:], size-8); err != nil {
		return 0, err
	}
	if string(tail[4:]) != "PAR1" {
		return 0, corruptf("no Parquet magic bytes at the end (truncated?)")
	}
	n := int64(binary.LittleEndian.Uint32(tail[:4]))
	if n == 0 || n > size-12 {
		return 0, corruptf("footer length %d does not fit in the file of %d bytes (truncated?)", n, size)
	}
	footer := make([]byte, n)
	if _, err := fh.ReadAt(footer, size-8-n); err != nil {
		return 0, err
	}
	if _, err := checkThrift(footer); err != nil {
		return 0, fmt.Errorf("footer: %w", thriftCause(err))
	}
	return size - 8 - n, nil
}

// thriftCause turns an end of input while walking metadata into a corruption.
func thriftCause(err error) error {
	if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
		return corruptf("metadata ends early")
	}
	return err
}

// checkColumnChunk checks that column chunk [start, start+total) lies inside
// the data part of the file (before footerAt) and walks its page headers:
// every page must fit in the chunk, and its uncompressed size and value count
// must stay within the memory bound, before parquet-go allocates them.
//
// It also checks page bodies where parquet-go would trust them too far (checkPage): for data pages
// whose dictionary indexes or definition levels are run-length encoded it walks the runs
// (decompressing the page once more when it is compressed), because parquet-go decodes every run
// before it compares the result with the page's value count, so a few bytes claiming billions of
// repeats would cost that much time and memory.
func checkColumnChunk(fh io.ReaderAt, start, total, footerAt, rows int64, shape chunkShape) error {
	if start < 4 || total < 0 || start > footerAt || total > footerAt-start {
		return corruptf("column chunk at %d of %d bytes lies outside the file's data (%d bytes)", start, total, footerAt)
	}
	end := start + total
	buf := make([]byte, 256)
	var body pageBody
	for pos := start; pos < end; {
		var h format.PageHeader
		n, err := readPageHeader(fh, pos, end, &buf, &h)
		if err != nil {
			return err
		}
		comp, unc := int64(h.CompressedPageSize), int64(h.UncompressedPageSize)
		left := end - pos - int64(n)
		if comp < 0 || comp > left {
			return corruptf("page at %d claims %d bytes, %d left in its column chunk", pos, comp, left)
		}
		if bound := minPageBound + pageRatio*comp; unc < 0 || unc > bound {
			return corruptf("page at %d claims %d uncompressed bytes, more than the bound of %d", pos, unc, bound)
		}
		var values int64
		switch {
		case h.DataPageHeader.Valid:
			values = int64(h.DataPageHeader.V.NumValues)
		case h.DataPageHeaderV2.Valid:
			values = max(int64(h.DataPageHeaderV2.V.NumValues), int64(h.DataPageHeaderV2.V.NumRows))
		case h.DictionaryPageHeader.Valid:
			values = int64(h.DictionaryPageHeader.V.NumValues)
		}
		if values < 0 || values > maxPageValues || !h.DictionaryPageHeader.Valid && values > shape.valueBound(rows) {
			return corruptf("page at %d claims %d values (row group of %d rows, bound %d)", pos, values, rows, maxPageValues)
		}
		if err := shape.checkPage(fh, &h, pos+int64(n), comp, values, &body); err != nil {
			return fmt.Errorf("page at %d: %w", pos, err)
		}
		pos += int64(n) + comp
	}
	return nil
}

// readPageHeader decodes the page header at pos (a column chunk ends at end) into h and returns
// its length. It reads a window of 256 bytes and grows it 16-fold while the header runs past it,
// up to maxPageHeader; buf is reused between calls. A header that does not decode is ErrCorruptFile.
func readPageHeader(fh io.ReaderAt, pos, end int64, buf *[]byte, h *format.PageHeader) (int, error) {
	for window := int64(256); ; window *= 16 {
		w := min(window, end-pos)
		if int64(cap(*buf)) < w {
			*buf = make([]byte, w)
		}
		b := (*buf)[:w]
		if _, err := fh.ReadAt(b, pos); err != nil && !(err == io.EOF && len(b) > 0) {
			return 0, err
		}
		n, err := checkThrift(b)
		if err == nil {
			if err = thrift.Unmarshal(new(thrift.CompactProtocol), b[:n], h); err != nil {
				return 0, corruptf("page header at %d: %v", pos, err)
			}
			return n, nil
		}
		if w == end-pos || w >= maxPageHeader || !(errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF)) {
			return 0, fmt.Errorf("page header at %d: %w", pos, thriftCause(err))
		}
	}
}

// chunkShape is what checkColumnChunk needs to know of a column chunk to walk its pages' runs.
type chunkShape struct {
	codec  format.CompressionCodec
	maxDef byte // 0 for a required column, 1 for an optional one, up to 3 for a vector column
	maxRep byte // 1 for a vector (list) column, else 0
}

// valueBound is the most values (levels) a data page of a chunk of rows rows may claim: rows for a
// scalar column; for a list column only the absolute bound, because a ragged list column may hold
// more than rows × its length, and the reader then names the row whose list is too long.
func (c chunkShape) valueBound(rows int64) int64 {
	if c.maxRep > 0 {
		return maxPageValues
	}
	return max(rows, 0)
}

// pageBody holds the buffers checkRuns reuses from page to page.
type pageBody struct{ raw, plain []byte }

// checkPage checks the body of the page with header h whose comp bytes start at off. It walks the
// run-length encoded parts of a data page, the definition levels of an optional column and the
// indexes of a dictionary-encoded page; values is the page's value count, nulls included.
func (c chunkShape) checkPage(fh io.ReaderAt, h *format.PageHeader, off, comp, values int64, b *pageBody) error {
	var dict, levels, v2, defRLE, repRLE bool
	var defLen, repLen int64
	defBits, repBits := bits.Len8(c.maxDef), bits.Len8(c.maxRep)
	switch {
	case h.DataPageHeader.Valid:
		v := &h.DataPageHeader.V
		dict = v.Encoding == format.RLEDictionary || v.Encoding == format.PlainDictionary
		defRLE = c.maxDef > 0 && v.DefinitionLevelEncoding == format.RLE
		repRLE = c.maxRep > 0 && v.RepetitionLevelEncoding == format.RLE
		levels = defRLE || repRLE
	case h.DataPageHeaderV2.Valid:
		v := &h.DataPageHeaderV2.V
		dict, levels, v2 = v.Encoding == format.RLEDictionary || v.Encoding == format.PlainDictionary, c.maxDef > 0, true
		defLen, repLen = int64(v.DefinitionLevelsByteLength), int64(v.RepetitionLevelsByteLength)
		if c.maxRep == 0 && repLen != 0 || repLen < 0 || defLen < 0 || repLen+defLen > comp {
			return corruptf("level lengths %d and %d do not fit in %d bytes", repLen, defLen, comp)
		}
		if c.maxDef == 0 && defLen != 0 {
			// parquet-go skips them (skipLevelsV2) and decodes the values from the rest; on the
			// fuzzer's input some rows then came out as values of earlier reads, different on
			// each run (where they come from in its buffers was not traced).
			return corruptf("a required column's page holds %d bytes of definition levels", defLen)
		}
	}
	if !dict && !levels {
		return nil
	}
	if int64(cap(b.raw)) < comp {
		b.raw = make([]byte, comp)
	}
	raw := b.raw[:comp]
	if _, err := fh.ReadAt(raw, off); err != nil && !(err == io.EOF && len(raw) > 0) {
		return err
	}
	// The part after the levels: in a v1 page the whole body (levels included) is compressed, in a
	// v2 page only what follows the levels, and only when the header says so.
	data, size := raw, int64(h.UncompressedPageSize)
	compressed := c.codec != format.Uncompressed
	if v2 {
		if c.maxRep > 0 {
			if err := checkHybrid(raw[:repLen], repBits, values, "repetition levels"); err != nil {
				return err
			}
		}
		if levels {
			if err := checkHybrid(raw[repLen:repLen+defLen], defBits, values, "definition levels"); err != nil {
				return err
			}
		}
		data, size = raw[repLen+defLen:], size-repLen-defLen
		if h.DataPageHeaderV2.V.IsCompressed.Valid && !h.DataPageHeaderV2.V.IsCompressed.V {
			compressed = false
		}
		if !dict {
			return nil
		}
	}
	if compressed {
		var err error
		if data, err = b.decompress(c.codec, data, size); err != nil {
			return err
		}
	}
	if !v2 && c.maxDef > 0 {
		// parquet-go reads each level block of a v1 page as a 4-byte length and that many bytes,
		// whatever its encoding, so the indexes follow them even when the levels are bit-packed
		// (which are then not walked).
		for _, lv := range []struct {
			bits      int
			what      string
			has, walk bool
		}{{repBits, "repetition levels", c.maxRep > 0, repRLE}, {defBits, "definition levels", true, defRLE}} {
			if !lv.has {
				continue
			}
			if len(data) < 4 {
				return nil // parquet-go reports the truncation itself
			}
			l := int64(binary.LittleEndian.Uint32(data))
			if l > int64(len(data)-4) {
				return nil
			}
			if lv.walk {
				if err := checkHybrid(data[4:4+l], lv.bits, values, lv.what); err != nil {
					return err
				}
			}
			data = data[4+l:]
		}
	}
	if !dict || len(data) == 0 {
		return nil
	}
	return checkHybrid(data[1:], int(data[0]), values, "dictionary indexes")
}

// decompress decodes a page's data with parquet-go's codec into b.plain, refusing output beyond the
// page's stated uncompressed size.
func (b *pageBody) decompress(codec format.CompressionCodec, src []byte, size int64) ([]byte, error) {
	if size < 0 {
		return nil, corruptf("page states %d uncompressed bytes", size)
	}
	switch codec {
	case format.Snappy:
		// snappy allocates the length its header claims before decoding.
		if n, err := snappy.DecodedLen(src); err != nil || int64(n) > size {
			return nil, corruptf("snappy data claims %d bytes, more than the page's %d", n, size)
		}
	case format.Lz4Raw:
		// parquet-go's LZ4_RAW codec retries a corrupt block with ever larger buffers; the
		// block is decoded here into exactly the stated size (see lz4raw.go).
		if int64(cap(b.plain)) < size {
			b.plain = make([]byte, size)
		}
		out := b.plain[:size]
		if err := lz4Block(out, src); err != nil {
			return nil, err
		}
		return out, nil
	}
	out, err := parquet.LookupCompressionCodec(codec).Decode(b.plain[:0], src)
	if err != nil {
		return nil, corruptf("decompressing: %v", err)
	}
	if int64(len(out)) > size {
		return nil, corruptf("page decompresses to %d bytes, more than its stated %d", len(out), size)
	}
	b.plain = out
	return out, nil
}

// checkHybrid walks the run headers of RLE/bit-packed hybrid data of the given bit width and fails
// when the runs hold more than about limit values (a bit-packed run pads to groups of eight; writers
// pad at most the last one). A malformed header ends the walk: parquet-go reports it while decoding.
func checkHybrid(b []byte, bitWidth int, limit int64, what string) error {
	if bitWidth < 0 || bitWidth > 32 {
		return nil // parquet-go refuses the bit width itself
	}
	bound := limit + 512
	var total int64
	for i := 0; i < len(b); {
		u, n := binary.Uvarint(b[i:])
		if n <= 0 {
			return nil
		}
		i += n
		count := u >> 1
		if count == 0 {
			continue // an empty run, with no value bytes (as parquet-go reads it)
		}
		if u&1 == 1 { // bit-packed: count groups of eight values, bitWidth bytes per group
			if count > uint64(bound) {
				return corruptf("%s claim more than %d values, the page holds %d", what, bound, limit)
			}
			total += 8 * int64(count)
			i += int(count) * bitWidth
		} else {
			if count > uint64(bound) {
				return corruptf("%s claim more than %d values, the page holds %d", what, bound, limit)
			}
			total += int64(count)
			i += (bitWidth + 7) / 8
		}
		if total > bound {
			return corruptf("%s claim more than %d values, the page holds %d", what, bound, limit)
		}
	}
	return nil
}

// IPC framing: a message is [0xFFFFFFFF] int32 metadata length, a
// flatbuffer Message of that length (which states the body length), and the
// body. A zero length ends the stream.
const ipcContinuation = 0xFFFFFFFF

// checkIPCStream walks the messages of an Arrow IPC stream from offset start
// to end and checks that every metadata and body length fits in what remains.
func checkIPCStream(fh io.ReaderAt, start, end int64) error {
	var head [8]byte
	for pos := start; pos < end; {
		left := end - pos
		if left < 4 {
			return corruptf("stream ends inside a message header at %d", pos)
		}
		if _, err := fh.ReadAt(head[:4], pos); err != nil {
			return err
		}
		l, hdr := int64(int32(binary.LittleEndian.Uint32(head[:4]))), int64(4)
		if binary.LittleEndian.Uint32(head[:4]) == ipcContinuation {
			if left < 8 {
				return corruptf("stream ends inside a message header at %d", pos)
			}
			if _, err := fh.ReadAt(head[4:8], pos+4); err != nil {
				return err
			}
			l, hdr = int64(int32(binary.LittleEndian.Uint32(head[4:8]))), 8
		}
		if l == 0 {
			return nil // end-of-stream marker
		}
		if l < 0 || l > left-hdr {
			return corruptf("message at %d claims %d bytes of metadata, %d left in the file", pos, l, left-hdr)
		}
		meta := make([]byte, l)
		if _, err := fh.ReadAt(meta, pos+hdr); err != nil {
			return err
		}
		if err := checkMessage(meta); err != nil {
			return fmt.Errorf("message at %d: %w", pos, err)
		}
		body, err := bodyLength(meta)
		if err != nil {
			return corruptf("message at %d: %v", pos, err)
		}
		if rest := left - hdr - l; body < 0 || body > rest {
			return corruptf("message at %d claims a body of %d bytes, %d left in the file", pos, body, rest)
		}
		pos += hdr + l + body
	}
	return nil
}

// bodyLength reads the body length from a flatbuffer Message with arrow's
// own decoder; garbage metadata makes it panic, which becomes an error.
func bodyLength(meta []byte) (n int64, err error) {
	defer func() {
		if p := recover(); p != nil {
			n, err = 0, fmt.Errorf("unreadable message metadata")
		}
	}()
	if len(meta) < 8 {
		return 0, fmt.Errorf("message metadata of %d bytes is too short", len(meta))
	}
	msg := ipc.NewMessage(memory.NewBufferBytes(meta), memory.NewBufferBytes(nil))
	defer msg.Release()
	return msg.BodyLen(), nil
}

// checkArrowFileFooter checks that an Arrow IPC file's footer length fits.
func checkArrowFileFooter(fh io.ReaderAt, size int64) error {
	const magic = "ARROW1"
	if size < int64(2*8+4) {
		return corruptf("%d bytes is too small for an Arrow IPC file", size)
	}
	var tail [10]byte
	if _, err := fh.ReadAt(tail[:], size-10); err != nil {
		return err
	}
	if string(tail[4:]) != magic {
		return corruptf("no Arrow magic bytes at the end (truncated?)")
	}
	if n := int64(int32(binary.LittleEndian.Uint32(tail[:4]))); n <= 0 || n > size-18 {
		return corruptf("footer length %d does not fit in the file of %d bytes", n, size)
	}
	return nil
}

// allocLimit is the largest single buffer arrow may allocate while reading a
// file of size bytes: the file size (an uncompressed buffer cannot be
// larger), or up to 64 times more for compressed buffers, at least 64 MiB
// and at most 1 GiB unless the file itself is larger.
func allocLimit(size int64) int64 {
	return max(size, min(64*size, 1<<30), 64<<20)
}

// allocRefused is the panic value of boundedAllocator; the readers recover
// it into an error.
type allocRefused struct{ size, limit int64 }

func (a *allocRefused) Error() string {
	return fmt.Sprintf("%v: the file claims a buffer of %d bytes, beyond the bound of %d for this file", ErrCorruptFile, a.size, a.limit)
}

func (a *allocRefused) Unwrap() error { return ErrCorruptFile }

// boundedAllocator refuses (by panicking with *allocRefused) any allocation
// that is negative, larger than limit, or that would take the live total
// beyond 4*limit. It is used by one goroutine.
type boundedAllocator struct {
	mem   memory.Allocator
	limit int64
	live  int64
}

func newBoundedAllocator(size int64) *boundedAllocator {
	return &boundedAllocator{mem: memory.NewGoAllocator(), limit: allocLimit(size)}
}

func (a *boundedAllocator) check(size, old int) {
	s := int64(size)
	if size < 0 || s > a.limit || a.live-int64(old)+s > 4*a.limit {
		panic(&allocRefused{size: s, limit: a.limit})
	}
	a.live += s - int64(old)
}

func (a *boundedAllocator) Allocate(size int) []byte {
	a.check(size, 0)
	return a.mem.Allocate(size)
}

func (a *boundedAllocator) Reallocate(size int, b []byte) []byte {
	a.check(size, len(b))
	return a.mem.Reallocate(size, b)
}

func (a *boundedAllocator) Free(b []byte) {
	a.live -= int64(len(b))
	a.mem.Free(b)
}

// panicError turns a recovered panic value into an error, keeping the
// allocator's refusals as they are.
func panicError(what string, p any) error {
	if ar, ok := p.(*allocRefused); ok {
		return ar
	}
	return fmt.Errorf("%w: panic while %s: %v", ErrCorruptFile, what, p)
}

// fileSize returns the current size of an open file.
func fileSize(fh Handle) (int64, error) {
	st, err := fh.Stat()
	if err != nil {
		return 0, err
	}
	return st.Size(), nil
}
