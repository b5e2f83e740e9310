package stream_test

import (
	"bytes"
	"encoding/binary"
	"errors"
	"hash/crc32"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/ipc"
	"github.com/apache/arrow/go/v17/arrow/memory"
	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/encoding/thrift"
	"github.com/parquet-go/parquet-go/format"

	"github.com/kgauge/kgauge/stream"
)

// hostileBound is the most a hostile file may make the reader allocate in
// these tests (the files are a few kilobytes; the claims are gigabytes).
const hostileBound = 96 << 20

// readHostile opens and reads path as format f (bypassing sniffing, as a
// caller could) and returns the first error and the bytes allocated.
func readHostile(t *testing.T, path string, f stream.Format) (error, uint64) {
	t.Helper()
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	err := func() error {
		ds, err := stream.Open([]stream.File{{Path: path, Format: f}}, stream.Options{})
		if err != nil {
			return err
		}
		_, _, err = readAll(t, ds, 256)
		return err
	}()
	runtime.ReadMemStats(&after)
	return err, after.TotalAlloc - before.TotalAlloc
}

func checkHostile(t *testing.T, path string, f stream.Format, msg string) {
	t.Helper()
	err, alloc := readHostile(t, path, f)
	if err == nil {
		t.Fatalf("%s: read without error", filepath.Base(path))
	}
	var re *stream.ReadError
	if !errors.As(err, &re) || re.File != path {
		t.Fatalf("error %v is not a *ReadError naming %s", err, path)
	}
	if !bytes.Contains([]byte(err.Error()), []byte(msg)) {
		t.Errorf("error %q does not say %q", err, msg)
	}
	if alloc > hostileBound {
		t.Errorf("reading %s allocated %d bytes, more than %d", filepath.Base(path), alloc, hostileBound)
	}
}

type xy struct {
	X float64 `parquet:"x"`
	Y float64 `parquet:"y,dict"`
}

// smallParquet writes 1000 rows of (x, y) with parquet-go (y dictionary
// encoded) and returns the path, the bytes and the footer metadata.
func smallParquet(t *testing.T) (string, []byte, *format.FileMetaData) {
	t.Helper()
	p := tempPath(t, "small.parquet")
	fh, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	w := parquet.NewGenericWriter[xy](fh)
	rows := make([]xy, 1000)
	for i := range rows {
		rows[i] = xy{float64(i), float64(i % 7)}
	}
	if _, err := w.Write(rows); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	fh.Close()
	data, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	pf, err := parquet.OpenFile(bytes.NewReader(data), int64(len(data)))
	if err != nil {
		t.Fatal(err)
	}
	return p, data, pf.Metadata()
}

func writeFile(t *testing.T, name string, data []byte) string {
	t.Helper()
	p := tempPath(t, name)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func parquetWithFooter(footer []byte) []byte {
	b := append([]byte("PAR1"), footer...)
	b = binary.LittleEndian.AppendUint32(b, uint32(len(footer)))
	return append(b, "PAR1"...)
}

// TestHostileParquet: lengths, counts and sizes that a Parquet file claims
// beyond what it holds fail with a *ReadError and allocate little. Without
// the guards the first case ends the process ("fatal error: runtime: out of
// memory", seen with parquet-go v0.32.0).
func TestHostileParquet(t *testing.T) {
	_, data, meta := smallParquet(t)
	col := func(leaf int) *format.ColumnMetaData { return &meta.RowGroups[0].Columns[leaf].MetaData }
	header := func(h format.PageHeader) []byte {
		b, err := thrift.Marshal(new(thrift.CompactProtocol), &h)
		if err != nil {
			t.Fatal(err)
		}
		return b
	}
	patch := func(off int64, with []byte) []byte {
		b := bytes.Clone(data)
		copy(b[off:], with)
		return b
	}
	dataPage := func(comp, unc, values int32) []byte {
		return header(format.PageHeader{Type: format.DataPage, CompressedPageSize: comp, UncompressedPageSize: unc,
			DataPageHeader: thrift.Null[format.DataPageHeader]{Valid: true, V: format.DataPageHeader{NumValues: values}}})
	}
	dictOffset := col(1).DictionaryPageOffset
	if dictOffset == 0 {
		t.Fatal("column y has no dictionary page; the fixture is wrong")
	}
	// The first run of y's dictionary indexes, rewritten to repeat index 0 2^30 times in six bytes:
	// parquet-go v0.32.0 decodes every run before it compares with the page's 1000 values (found by
	// FuzzParquet: a 3 KB input ran for tens of seconds).
	var yPage format.PageHeader
	hr := new(thrift.CompactProtocol).NewReaderFromBytes(data[col(1).DataPageOffset:])
	if err := thrift.NewDecoder(hr).Decode(&yPage); err != nil {
		t.Fatal(err)
	}
	runsAt := col(1).DataPageOffset + int64(hr.BytesRead())
	if col(1).Codec != format.Uncompressed || data[runsAt] != 3 {
		t.Fatalf("y's first data page is not an uncompressed page of 3-bit indexes (codec %v, byte %d); the fixture is wrong",
			col(1).Codec, data[runsAt])
	}
	// parquet-go checks the page's CRC, so the rewritten page gets a fresh one (a header of the same
	// length: the CRC is a varint, so the repeated index is chosen to keep it).
	var hugeRun []byte
	for v := byte(0); v < 7 && hugeRun == nil; v++ {
		b := patch(runsAt+1, append(binary.AppendUvarint(nil, 1<<30<<1), v))
		h := yPage
		h.CRC = int32(crc32.ChecksumIEEE(b[runsAt : runsAt+int64(yPage.CompressedPageSize)]))
		if hb := header(h); int64(len(hb)) == runsAt-col(1).DataPageOffset {
			copy(b[col(1).DataPageOffset:], hb)
			hugeRun = b
		}
	}
	if hugeRun == nil {
		t.Fatal("no rewritten page header kept its length; the fixture is wrong")
	}
	footerLen := binary.LittleEndian.Uint32(data[len(data)-8:])
	hugeLen := bytes.Clone(data)
	binary.LittleEndian.PutUint32(hugeLen[len(hugeLen)-8:], 0xFFFFFFF0)

	for _, tc := range []struct {
		name string
		data []byte
		msg  string
	}{
		// FileMetaData field 4 (row_groups): a list of structs claiming 2^31-1 items.
		{"billions of row groups", parquetWithFooter([]byte{0x49, 0xFC, 0xFF, 0xFF, 0xFF, 0xFF, 0x07, 0x00}), "items"},
		// FileMetaData field 2 (schema): a binary claiming 2 GiB in a nested struct.
		{"huge schema name", parquetWithFooter([]byte{0x29, 0x1C, 0x48, 0xFF, 0xFF, 0xFF, 0xFF, 0x07, 0x00, 0x00}), "footer"},
		{"footer longer than the file", hugeLen, "footer length"},
		{"footer cut", append(bytes.Clone(data[:len(data)-8-int(footerLen)/2]), data[len(data)-8:]...), ""},
		{"page claims 2 GiB", patch(col(0).DataPageOffset, dataPage(1<<31-1, 1<<31-1, 1000)), "claims"},
		{"page claims 2 GiB uncompressed", patch(col(0).DataPageOffset, dataPage(8, 1<<31-1, 1)), "uncompressed"},
		{"page claims 2^30 values", patch(col(0).DataPageOffset, dataPage(8, 8, 1<<30)), "values"},
		{"dictionary claims 2^30 values", patch(dictOffset, header(format.PageHeader{Type: format.DictionaryPage,
			CompressedPageSize: 8, UncompressedPageSize: 8,
			DictionaryPageHeader: thrift.Null[format.DictionaryPageHeader]{Valid: true, V: format.DictionaryPageHeader{NumValues: 1 << 30}}})), "values"},
		{"dictionary claims 2 GiB", patch(dictOffset, header(format.PageHeader{Type: format.DictionaryPage,
			CompressedPageSize: 1<<31 - 1, UncompressedPageSize: 1<<31 - 1,
			DictionaryPageHeader: thrift.Null[format.DictionaryPageHeader]{Valid: true, V: format.DictionaryPageHeader{NumValues: 7}}})), "claims"},
		{"dictionary indexes repeat 2^30 times", hugeRun, "dictionary indexes claim"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			checkHostile(t, writeFile(t, "hostile.parquet", tc.data), stream.Parquet, tc.msg)
		})
	}
}

// TestTruncatedWhileReading: a file cut short between Open and the pass (a
// writer replacing it in place) gives a *ReadError, not a panic or garbage.
func TestTruncatedWhileReading(t *testing.T) {
	p, data, meta := smallParquet(t)
	arrowPath := tempPath(t, "t.arrows")
	writeArrowIPC(t, arrowPath, newGen(5000, 3), 500, false)
	arrowFile := tempPath(t, "t.arrow")
	writeArrowIPC(t, arrowFile, newGen(5000, 3), 500, true)
	for _, tc := range []struct {
		path string
		cut  int64
	}{
		{p, meta.RowGroups[0].Columns[1].MetaData.DictionaryPageOffset + 3}, // inside the first chunks
		{p, int64(len(data)) / 2},
		{arrowPath, 3000},
		{arrowFile, 3000},
	} {
		t.Run(filepath.Base(tc.path), func(t *testing.T) {
			src, err := os.ReadFile(tc.path)
			if err != nil {
				t.Fatal(err)
			}
			tc.path = writeFile(t, filepath.Base(tc.path), src)
			files, err := stream.Discover([]string{tc.path})
			if err != nil {
				t.Fatal(err)
			}
			ds, err := stream.Open(files, stream.Options{})
			if err != nil {
				t.Fatal(err)
			}
			if err := os.Truncate(tc.path, tc.cut); err != nil {
				t.Fatal(err)
			}
			_, _, err = readAll(t, ds, 100)
			var re *stream.ReadError
			if !errors.As(err, &re) || re.File != tc.path {
				t.Fatalf("after truncation: %v, want a *ReadError naming the file", err)
			}
		})
	}
	// Deleted between Open and the pass.
	q := tempPath(t, "gone.parquet")
	os.WriteFile(q, data, 0o644)
	ds, err := openPaths(t, stream.Options{}, q)
	if err != nil {
		t.Fatal(err)
	}
	os.Remove(q)
	_, _, err = readAll(t, ds, 100)
	var re *stream.ReadError
	if !errors.As(err, &re) || re.File != q || !errors.Is(err, os.ErrNotExist) {
		t.Fatalf("after deletion: %v, want a *ReadError naming the file and wrapping ErrNotExist", err)
	}
}

// ipcStream writes a small Arrow IPC stream of one float64 column in batches
// of 100 rows.
func ipcStream(t *testing.T, rows int, file bool) []byte {
	t.Helper()
	schema := arrow.NewSchema([]arrow.Field{{Name: "x", Type: arrow.PrimitiveTypes.Float64}}, nil)
	fh, err := os.Create(tempPath(t, "src.arrow"))
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	b := array.NewFloat64Builder(memory.DefaultAllocator)
	defer b.Release()
	var w interface {
		Write(arrow.Record) error
		Close() error
	}
	if file {
		fw, err := ipc.NewFileWriter(fh, ipc.WithSchema(schema))
		if err != nil {
			t.Fatal(err)
		}
		w = fw
	} else {
		w = ipc.NewWriter(fh, ipc.WithSchema(schema))
	}
	for done := 0; done < rows; done += 100 {
		for i := range 100 {
			b.Append(float64(done + i))
		}
		arr := b.NewArray()
		rec := array.NewRecord(schema, []arrow.Array{arr}, 100)
		if err := w.Write(rec); err != nil {
			t.Fatal(err)
		}
		rec.Release()
		arr.Release()
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(fh.Name())
	if err != nil {
		t.Fatal(err)
	}
	return data
}

// replaceInt64 returns a copy of data with the first little-endian int64
// equal to old at or after from replaced by v.
func replaceInt64(t *testing.T, data []byte, from int, old, v int64) []byte {
	t.Helper()
	pat := binary.LittleEndian.AppendUint64(nil, uint64(old))
	i := bytes.Index(data[from:], pat)
	if i < 0 {
		t.Fatalf("value %d not found", old)
	}
	out := bytes.Clone(data)
	binary.LittleEndian.PutUint64(out[from+i:], uint64(v))
	return out
}

// replaceBufferLen returns a copy of data where the first Arrow Buffer struct
// {offset 0, length old} at or after from claims length v instead.
func replaceBufferLen(t *testing.T, data []byte, from int, old, v int64) []byte {
	t.Helper()
	pat := binary.LittleEndian.AppendUint64(make([]byte, 8), uint64(old))
	i := bytes.Index(data[from:], pat)
	if i < 0 {
		t.Fatalf("buffer of length %d not found", old)
	}
	out := bytes.Clone(data)
	binary.LittleEndian.PutUint64(out[from+i+8:], uint64(v))
	return out
}

// TestHostileArrow: message, body and buffer lengths claimed beyond the file
// fail with a *ReadError and allocate little. Without the guards arrow/go/v17
// allocates the claimed body (about 1.3 GB for a few random bytes) and panics
// on a negative length.
func TestHostileArrow(t *testing.T) {
	good := ipcStream(t, 300, false)
	// The schema message comes first; find the first record batch's body length.
	mr := ipc.NewMessageReader(bytes.NewReader(good))
	var bodyLen int64
	for {
		m, err := mr.Message()
		if err != nil {
			t.Fatal(err)
		}
		if m.Type() == ipc.MessageRecordBatch {
			bodyLen = m.BodyLen()
			break
		}
	}
	mr.Release()
	goodFile := ipcStream(t, 300, true)
	footerAt := len(goodFile) - 10 - int(binary.LittleEndian.Uint32(goodFile[len(goodFile)-10:]))
	cont := []byte{0xFF, 0xFF, 0xFF, 0xFF}
	for _, tc := range []struct {
		name string
		data []byte
		f    stream.Format
		msg  string
	}{
		{"metadata claims 2 GiB", append(append(cont, 0xF0, 0xFF, 0xFF, 0x7F), bytes.Repeat([]byte{7}, 64)...), stream.ArrowStream, "metadata"},
		{"negative metadata length", append(append(cont, 0xF0, 0xFF, 0xFF, 0xFF), bytes.Repeat([]byte{7}, 64)...), stream.ArrowStream, "metadata"},
		{"random bytes", []byte{0x10, 0x00, 0x00, 0x00, 0x0c, 0x00, 0x00, 0x00, 0x08, 0x00, 0x0c, 0x00, 0x04, 0x00, 0x08, 0x00, 0xAA, 0xBB, 0xCC, 0xDD}, stream.ArrowStream, ""},
		{"body claims 1 TiB", replaceInt64(t, good, 0, bodyLen, 1<<40), stream.ArrowStream, "body"},
		{"negative body", replaceInt64(t, good, 0, bodyLen, -8), stream.ArrowStream, "body"},
		{"buffer claims 1 TiB", replaceBufferLen(t, good, 0, 800, 1<<40), stream.ArrowStream, "bound"},
		{"file block body claims 1 TiB", replaceInt64(t, goodFile, footerAt, bodyLen, 1<<40), stream.ArrowFile, "block at"},
		{"file buffer claims 1 TiB", replaceBufferLen(t, goodFile, 8, 800, 1<<40), stream.ArrowFile, "bound"},
		{"file footer length", append(bytes.Clone(goodFile[:len(goodFile)-10]), 0xF0, 0xFF, 0xFF, 0x7F, 'A', 'R', 'R', 'O', 'W', '1'), stream.ArrowFile, "footer length"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			checkHostile(t, writeFile(t, "hostile.arrow", tc.data), tc.f, tc.msg)
		})
	}
	// The guards pass good files through.
	for _, tc := range []struct {
		data []byte
		f    stream.Format
	}{{good, stream.ArrowStream}, {goodFile, stream.ArrowFile}} {
		p := writeFile(t, "good.arrow", tc.data)
		ds, err := stream.Open([]stream.File{{Path: p, Format: tc.f}}, stream.Options{})
		if err != nil {
			t.Fatal(err)
		}
		rows, _, err := readAll(t, ds, 64)
		if err != nil || len(rows) != 300 {
			t.Fatalf("%v: %d rows, err %v; want 300 rows", tc.f, len(rows), err)
		}
	}
}

// TestRequiredColumnLevels: a v2 data page of a required column that claims bytes of definition
// levels fails with a *ReadError. parquet-go takes those bytes for levels and decodes the values
// from the rest, and the rows they do not cover came out as whatever its page buffers held before:
// other values from earlier reads, different on each run (found by FuzzParquet in CI; the input
// is the corpus entry, whose column g, INT32 DECIMAL(9,3), claims 32 bytes of levels).
func TestRequiredColumnLevels(t *testing.T) {
	entry, err := os.ReadFile("testdata/fuzz/FuzzParquet/b6f3f1c1409119ec")
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(entry)), "\n")
	quoted, ok := strings.CutPrefix(lines[len(lines)-1], "[]byte(")
	if !ok {
		t.Fatalf("the corpus entry's last line %q is not a []byte value", lines[len(lines)-1])
	}
	data, err := strconv.Unquote(strings.TrimSuffix(quoted, ")"))
	if err != nil {
		t.Fatal(err)
	}
	path := writeFile(t, "levels.parquet", []byte(data))
	for range 5 { // before the guard, the stale rows showed in about one read in three
		checkHostile(t, path, stream.Parquet, "required column's page holds 32 bytes of definition levels")
	}
}
