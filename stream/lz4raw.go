package stream

import (
	"encoding/binary"
	"fmt"
	"io"
	"slices"
	"sort"

	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/encoding/thrift"
	"github.com/parquet-go/parquet-go/format"
	"github.com/pierrec/lz4/v4"
)

// LZ4_RAW column chunks.
//
// parquet-go v0.32.0 decodes an LZ4_RAW page into a fresh buffer whenever its guess of the output
// (three times the compressed size) exceeds the pooled page buffer, and then keeps the pooled
// buffer, stale bytes and all, when the output has exactly the page's size; it also retries a
// corrupt block with ever larger buffers. Its codec table cannot be replaced. So kgauge decodes
// LZ4_RAW pages itself with github.com/pierrec/lz4/v4 (the library parquet-go wraps), each into a
// buffer of exactly the page's stated size, and hands parquet-go the same column chunk with every
// page uncompressed: lz4View is a virtual Parquet file holding that chunk and a footer that
// describes it as UNCOMPRESSED, and parquet-go's own page decoding (encodings, levels,
// dictionaries) reads it. Pages are decompressed when parquet-go reads them, one at a time, so
// memory stays one page per column as on the ordinary path.

// lz4Segment is one part of the virtual column chunk: a re-encoded page header (hdr) or a page
// body, stored LZ4_RAW-compressed in the file at src (comp bytes) and served decompressed (size
// bytes). levels is the length of a v2 page's level bytes, which are stored uncompressed.
type lz4Segment struct {
	at        int64 // offset in the virtual file
	size      int64
	hdr       []byte
	src, comp int64
	levels    int64
	plain     bool // the page body is stored uncompressed (a v2 page with is_compressed false)
}

// lz4View is a virtual Parquet file: "PAR1", one column chunk with its pages uncompressed, the
// footer, its length and "PAR1". It implements io.ReaderAt.
type lz4View struct {
	fh     io.ReaderAt
	segs   []lz4Segment
	footer []byte // footer, length and magic
	end    int64  // offset of the footer
	cached int    // index of the segment in buf, -1 for none
	buf    []byte
	raw    []byte
}

// openLZ4Chunk returns the pages of the LZ4_RAW column chunk leaf of row group rg of pf, read from
// fh and decompressed page by page with pierrec/lz4. The chunk's page headers have been checked by
// checkColumnChunk.
func openLZ4Chunk(pf *parquet.File, fh io.ReaderAt, rg, leaf int) (*parquet.FilePages, error) {
	meta := pf.Metadata()
	cm := meta.RowGroups[rg].Columns[leaf].MetaData
	start := cm.DataPageOffset
	if cm.DictionaryPageOffset != 0 {
		start = cm.DictionaryPageOffset
	}
	v := &lz4View{fh: fh, cached: -1}
	at := int64(4)
	buf := make([]byte, 256)
	for pos, end := start, start+cm.TotalCompressedSize; pos < end; {
		var h format.PageHeader
		n, err := readPageHeader(fh, pos, end, &buf, &h)
		if err != nil {
			return nil, err
		}
		comp, size := int64(h.CompressedPageSize), int64(h.UncompressedPageSize)
		body := lz4Segment{src: pos + int64(n), comp: comp, size: size}
		if v2 := &h.DataPageHeaderV2; v2.Valid {
			body.levels = int64(v2.V.DefinitionLevelsByteLength) + int64(v2.V.RepetitionLevelsByteLength)
			if body.levels < 0 || body.levels > comp || body.levels > size {
				return nil, corruptf("page at %d: level lengths do not fit in its %d bytes", pos, comp)
			}
			body.plain = v2.V.IsCompressed.Valid && !v2.V.IsCompressed.V
			v2.V.IsCompressed = thrift.New(false)
		}
		if body.plain && comp != size {
			return nil, corruptf("page at %d: an uncompressed page of %d bytes states %d", pos, comp, size)
		}
		h.CompressedPageSize = h.UncompressedPageSize
		h.CRC = 0 // the checksum is of the compressed bytes; the LZ4 decoder checks the block instead
		hdr, err := thrift.Marshal(new(thrift.CompactProtocol), &h)
		if err != nil {
			return nil, fmt.Errorf("page header at %d: %w", pos, err)
		}
		v.segs = append(v.segs, lz4Segment{at: at, size: int64(len(hdr)), hdr: hdr})
		at += int64(len(hdr))
		body.at = at
		v.segs = append(v.segs, body)
		at += size
		pos += int64(n) + comp
	}
	v.end = at
	// The footer: the file's metadata with this row group alone, the chunk at offset 4 and
	// uncompressed. parquet-go takes a column's codec from its first row group's chunk.
	fm := *meta
	row := meta.RowGroups[rg]
	row.Columns = slices.Clone(row.Columns)
	c := &row.Columns[leaf]
	c.MetaData.Codec = format.Uncompressed
	shift := 4 - start
	c.MetaData.DataPageOffset += shift
	if c.MetaData.DictionaryPageOffset != 0 {
		c.MetaData.DictionaryPageOffset += shift
	}
	c.MetaData.IndexPageOffset = 0
	c.MetaData.TotalCompressedSize = v.end - 4
	c.MetaData.TotalUncompressedSize = v.end - 4
	c.FileOffset = 4
	c.OffsetIndexOffset, c.OffsetIndexLength, c.ColumnIndexOffset, c.ColumnIndexLength = 0, 0, 0, 0
	row.Ordinal, row.FileOffset, row.TotalCompressedSize = 0, 4, v.end-4
	fm.RowGroups = []format.RowGroup{row}
	fm.NumRows = row.NumRows
	footer, err := thrift.Marshal(new(thrift.CompactProtocol), &fm)
	if err != nil {
		return nil, fmt.Errorf("re-encoding the footer: %w", err)
	}
	footer = binary.LittleEndian.AppendUint32(footer, uint32(len(footer)))
	v.footer = append(footer, "PAR1"...)
	size := v.end + int64(len(v.footer))
	vf, err := parquet.OpenFile(v, size, parquet.SkipPageIndex(true), parquet.SkipBloomFilters(true))
	if err != nil {
		return nil, fmt.Errorf("LZ4_RAW column chunk: %w", err)
	}
	fc, ok := vf.RowGroups()[0].ColumnChunks()[leaf].(*parquet.FileColumnChunk)
	if !ok {
		return nil, fmt.Errorf("column chunk %d is not a file column chunk", leaf)
	}
	return fc.PagesFrom(v), nil
}

// ReadAt serves the virtual file, decompressing a page body when a read reaches it.
func (v *lz4View) ReadAt(p []byte, off int64) (int, error) {
	n := 0
	for n < len(p) {
		o := off + int64(n)
		switch {
		case o < 4:
			n += copy(p[n:], "PAR1"[o:])
			continue
		case o >= v.end:
			k := o - v.end
			if k >= int64(len(v.footer)) {
				return n, io.EOF
			}
			n += copy(p[n:], v.footer[k:])
			continue
		}
		i := sort.Search(len(v.segs), func(i int) bool { return v.segs[i].at+v.segs[i].size > o })
		s := &v.segs[i]
		data := s.hdr
		if data == nil {
			var err error
			if data, err = v.body(i); err != nil {
				return n, err
			}
		}
		n += copy(p[n:], data[o-s.at:])
	}
	return n, nil
}

// body returns the decompressed body of segment i (kept until another body is asked for).
func (v *lz4View) body(i int) ([]byte, error) {
	s := &v.segs[i]
	if v.cached == i {
		return v.buf[:s.size], nil
	}
	if int64(cap(v.raw)) < s.comp {
		v.raw = make([]byte, s.comp)
	}
	raw := v.raw[:s.comp]
	if _, err := v.fh.ReadAt(raw, s.src); err != nil && !(err == io.EOF && len(raw) > 0) {
		return nil, err
	}
	if int64(cap(v.buf)) < s.size {
		v.buf = make([]byte, s.size)
	}
	out := v.buf[:s.size]
	if s.plain {
		copy(out, raw)
	} else {
		copy(out, raw[:s.levels])
		if err := lz4Block(out[s.levels:], raw[s.levels:]); err != nil {
			v.cached = -1
			return nil, err
		}
	}
	v.cached = i
	return out, nil
}

// lz4Block decompresses one LZ4 block (LZ4_RAW's framing) into exactly len(dst) bytes: a block
// that decodes to more or fewer bytes than the page states is corrupt.
func lz4Block(dst, src []byte) error {
	n, err := lz4.UncompressBlock(src, dst)
	switch {
	case err != nil:
		return corruptf("LZ4_RAW page does not decompress into its stated %d bytes: %v", len(dst), err)
	case n != len(dst):
		return corruptf("LZ4_RAW page decompresses to %d bytes, not its stated %d", n, len(dst))
	}
	return nil
}

// isLZ4 reports whether the column chunk leaf of row group rg of pf is LZ4_RAW-compressed.
func isLZ4(pf *parquet.File, rg, leaf int) bool {
	rgs := pf.Metadata().RowGroups
	return rg < len(rgs) && leaf < len(rgs[rg].Columns) && rgs[rg].Columns[leaf].MetaData.Codec == format.Lz4Raw
}
