package stream_test

import (
	"bytes"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	apq "github.com/apache/arrow/go/v17/parquet"
	"github.com/apache/arrow/go/v17/parquet/compress"
	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/compress/lz4"

	"github.com/kgauge/kgauge/stream"
)

// bufSizes are the Read buffer sizes (rows) every reader test runs with; the
// largest exceeds every unit.
var bufSizes = []int{1, 3, 1000, 5000}

func TestParquetGoWriter(t *testing.T) {
	g := newGen(2000, 7)
	want, wantSkipped := g.pgoWant()
	cases := []struct {
		name string
		opts []parquet.WriterOption
	}{
		{"Uncompressed", []parquet.WriterOption{parquet.MaxRowsPerRowGroup(700), parquet.PageBufferSize(1024)}},
		{"Snappy", []parquet.WriterOption{parquet.Compression(&parquet.Snappy), parquet.MaxRowsPerRowGroup(500), parquet.PageBufferSize(2048)}},
		{"ZstdPageV1", []parquet.WriterOption{parquet.Compression(&parquet.Zstd), parquet.DataPageVersion(1), parquet.PageBufferSize(777)}},
		{"GzipPageV1", []parquet.WriterOption{parquet.Compression(&parquet.Gzip), parquet.DataPageVersion(1), parquet.MaxRowsPerRowGroup(900)}},
		{"Lz4RawSplitDelta", []parquet.WriterOption{parquet.Compression(&parquet.Lz4Raw), parquet.MaxRowsPerRowGroup(600), parquet.PageBufferSize(1500),
			parquet.DefaultEncodingFor(parquet.Double, &parquet.ByteStreamSplit), parquet.DefaultEncodingFor(parquet.Float, &parquet.ByteStreamSplit),
			parquet.DefaultEncodingFor(parquet.Int32, &parquet.DeltaBinaryPacked), parquet.DefaultEncodingFor(parquet.Int64, &parquet.DeltaBinaryPacked)}},
	}
	for _, tc := range cases {
		p := tempPath(t, tc.name+".parquet")
		writePGo(t, p, g, tc.opts...)
		for _, bs := range bufSizes {
			t.Run(tc.name+"/buf"+itoa(bs), func(t *testing.T) {
				ds, err := openPaths(t, stream.Options{}, p)
				if err != nil {
					t.Fatal(err)
				}
				defer ds.Close()
				if !slices.Equal(ds.Columns, pgoColumns) {
					t.Fatalf("Columns = %v, want %v", ds.Columns, pgoColumns)
				}
				if got, want := ds.Rows, int64(g.n); got != want {
					t.Fatalf("Rows = %d, want %d", got, want)
				}
				if tc.name != "ZstdPageV1" && len(ds.Units) < 3 {
					t.Fatalf("want several row groups, got %d units", len(ds.Units))
				}
				got, skipped, err := readAll(t, ds, bs)
				if err != nil {
					t.Fatal(err)
				}
				compareRows(t, got, want, 0)
				if skipped != wantSkipped {
					t.Fatalf("Skipped = %d, want %d", skipped, wantSkipped)
				}
			})
		}
	}
}

func TestParquetGoTypesAndIgnored(t *testing.T) {
	p := tempPath(t, "t.parquet")
	writePGo(t, p, newGen(50, 1))
	ds, err := openPaths(t, stream.Options{}, p)
	if err != nil {
		t.Fatal(err)
	}
	wantTypes := []string{"float64", "float64", "float32", "int32", "int64", "decimal(18,2)", "decimal(9,3)", "float64"}
	if !slices.Equal(ds.Types, wantTypes) {
		t.Fatalf("Types = %v, want %v", ds.Types, wantTypes)
	}
	wantIgnored := []stream.IgnoredColumn{{Name: "s", Type: "string", Reason: "not numeric"}, {Name: "t", Type: "timestamp", Reason: "temporal"}}
	if !slices.Equal(ds.Ignored, wantIgnored) {
		t.Fatalf("Ignored = %v, want %v", ds.Ignored, wantIgnored)
	}
}

func TestArrowParquetWriter(t *testing.T) {
	g := newGen(1500, 11)
	want, wantSkipped := g.arrowWant(false)
	cases := []struct {
		name  string
		props []apq.WriterProperty
	}{
		{"SnappyDictV1", []apq.WriterProperty{apq.WithCompression(compress.Codecs.Snappy), apq.WithDictionaryDefault(true),
			apq.WithMaxRowGroupLength(600), apq.WithDataPageSize(1024)}},
		{"ZstdDictV2", []apq.WriterProperty{apq.WithCompression(compress.Codecs.Zstd), apq.WithDictionaryDefault(true),
			apq.WithDataPageVersion(apq.DataPageV2), apq.WithMaxRowGroupLength(500), apq.WithDataPageSize(700)}},
		{"PlainUncompressed", []apq.WriterProperty{apq.WithDictionaryDefault(false), apq.WithMaxRowGroupLength(1000)}},
		// Data page v2 with DELTA_BINARY_PACKED integers (Arrow Go v17 writes neither
		// BYTE_STREAM_SPLIT nor LZ4_RAW; parquet-go's writer covers those in TestParquetGoWriter).
		{"DeltaZstdV2", []apq.WriterProperty{apq.WithCompression(compress.Codecs.Zstd), apq.WithDictionaryDefault(false),
			apq.WithDataPageVersion(apq.DataPageV2), apq.WithMaxRowGroupLength(700), apq.WithDataPageSize(900),
			apq.WithEncodingFor("i32", apq.Encodings.DeltaBinaryPacked), apq.WithEncodingFor("i64", apq.Encodings.DeltaBinaryPacked),
			apq.WithEncodingFor("u16", apq.Encodings.DeltaBinaryPacked)}},
		{"DeltaSnappyV2", []apq.WriterProperty{apq.WithCompression(compress.Codecs.Snappy), apq.WithDataPageVersion(apq.DataPageV2),
			apq.WithMaxRowGroupLength(1000), apq.WithDictionaryFor("x", true), apq.WithDictionaryFor("i64", false),
			apq.WithEncodingFor("i64", apq.Encodings.DeltaBinaryPacked)}},
	}
	for _, tc := range cases {
		p := tempPath(t, tc.name+".parquet")
		writeArrowParquet(t, p, g, tc.props...)
		for _, bs := range bufSizes {
			t.Run(tc.name+"/buf"+itoa(bs), func(t *testing.T) {
				ds, err := openPaths(t, stream.Options{}, p)
				if err != nil {
					t.Fatal(err)
				}
				if !slices.Equal(ds.Columns, arrowColumns) {
					t.Fatalf("Columns = %v, want %v", ds.Columns, arrowColumns)
				}
				if len(ds.Units) < 2 {
					t.Fatalf("want several row groups, got %d", len(ds.Units))
				}
				got, skipped, err := readAll(t, ds, bs)
				if err != nil {
					t.Fatal(err)
				}
				// decimal128 -> float64 goes through arrow's ToFloat64 (multiply
				// by 10^-scale), which may differ from division by one ulp.
				compareRows(t, got, want, 1e-15)
				if skipped != wantSkipped {
					t.Fatalf("Skipped = %d, want %d", skipped, wantSkipped)
				}
			})
		}
	}
}

func TestArrowIPC(t *testing.T) {
	g := newGen(1200, 5)
	want, wantSkipped := g.arrowWant(true)
	for _, file := range []bool{true, false} {
		name, ext := "Stream", ".arrows"
		if file {
			name, ext = "File", ".arrow"
		}
		p := tempPath(t, "x"+ext)
		writeArrowIPC(t, p, g, 250, file)
		for _, bs := range bufSizes {
			t.Run(name+"/buf"+itoa(bs), func(t *testing.T) {
				ds, err := openPaths(t, stream.Options{}, p)
				if err != nil {
					t.Fatal(err)
				}
				wantFormat := stream.ArrowStream
				wantUnits := 1
				if file {
					wantFormat, wantUnits = stream.ArrowFile, 5
				}
				if ds.Files[0].Format != wantFormat || len(ds.Units) != wantUnits {
					t.Fatalf("format %v with %d units, want %v with %d", ds.Files[0].Format, len(ds.Units), wantFormat, wantUnits)
				}
				if wantCols := append(slices.Clone(arrowColumns), "h16"); !slices.Equal(ds.Columns, wantCols) {
					t.Fatalf("Columns = %v, want %v", ds.Columns, wantCols)
				}
				got, skipped, err := readAll(t, ds, bs)
				if err != nil {
					t.Fatal(err)
				}
				compareRows(t, got, want, 1e-15)
				if skipped != wantSkipped {
					t.Fatalf("Skipped = %d, want %d", skipped, wantSkipped)
				}
			})
		}
	}
}

func TestColumnSelection(t *testing.T) {
	dir := t.TempDir()
	g := newGen(300, 3)
	pq := filepath.Join(dir, "a.parquet")
	writePGo(t, pq, g, parquet.MaxRowsPerRowGroup(100))
	ipcPath := filepath.Join(dir, "b.arrows")
	writeArrowIPC(t, ipcPath, g, 100, false)

	t.Run("OrderAndSubset", func(t *testing.T) {
		ds, err := openPaths(t, stream.Options{Columns: []string{"f", "a"}}, pq)
		if err != nil {
			t.Fatal(err)
		}
		got, _, err := readAll(t, ds, 64)
		if err != nil {
			t.Fatal(err)
		}
		var want [][]float64
		for i := 0; i < g.n; i++ {
			if !math.IsNaN(g.a[i]) { // b and h are not selected: their nulls do not count
				want = append(want, []float64{float64(g.f[i]) / 100, g.a[i]})
			}
		}
		compareRows(t, got, want, 0)
	})
	errCases := []struct {
		name    string
		path    string
		cols    []string
		sent    error
		column  string
		message string
	}{
		{"NamedString", pq, []string{"a", "s"}, stream.ErrNotNumeric, "s", "string"},
		{"NamedTimestamp", pq, []string{"t"}, stream.ErrNotNumeric, "t", "timestamp"},
		{"NamedDate", ipcPath, []string{"day"}, stream.ErrNotNumeric, "day", "date32"},
		{"Unknown", pq, []string{"a", "nope"}, stream.ErrUnknownColumn, "nope", "unknown column"},
	}
	for _, tc := range errCases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := openPaths(t, stream.Options{Columns: tc.cols}, tc.path)
			checkReadError(t, err, tc.sent, "", tc.column, tc.message)
		})
	}
}

func TestMissingColumnInOneFile(t *testing.T) {
	dir := t.TempDir()
	g := newGen(100, 9)
	first := filepath.Join(dir, "1.parquet")
	writePGo(t, first, g)
	second := filepath.Join(dir, "2.arrow")
	writeArrowIPC(t, second, g, 50, true)
	for _, cols := range [][]string{nil, {"a", "b"}} {
		_, err := openPaths(t, stream.Options{Columns: cols}, first, second)
		checkReadError(t, err, stream.ErrMissingColumn, second, "a", "missing")
	}
}

func TestInfinite(t *testing.T) {
	dir := t.TempDir()
	g := newGen(500, 2)
	g.infRow = 321
	pq := filepath.Join(dir, "inf.parquet")
	writePGo(t, pq, g, parquet.MaxRowsPerRowGroup(200), parquet.PageBufferSize(512))
	st := filepath.Join(dir, "inf.arrows")
	writeArrowIPC(t, st, g, 100, false)
	for _, tc := range []struct{ path, column string }{{pq, "a"}, {st, "x"}} {
		ds, err := openPaths(t, stream.Options{}, tc.path)
		if err != nil {
			t.Fatal(err)
		}
		_, _, err = readAll(t, ds, 7)
		re := checkReadError(t, err, stream.ErrInfinite, tc.path, tc.column, "row 321")
		if re.Row != 321 {
			t.Fatalf("Row = %d, want 321", re.Row)
		}
	}
}

func TestBadFiles(t *testing.T) {
	dir := t.TempDir()
	fake := filepath.Join(dir, "fake.parquet")
	if err := os.WriteFile(fake, []byte("this is not parquet\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	good := filepath.Join(dir, "good.parquet")
	writePGo(t, good, newGen(3000, 4), parquet.Compression(&parquet.Snappy))
	data, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	truncated := filepath.Join(dir, "truncated.parquet")
	if err := os.WriteFile(truncated, data[:len(data)/2], 0o644); err != nil {
		t.Fatal(err)
	}
	// Keep magic bytes and footer, overwrite the pages: page headers become garbage.
	garbled := filepath.Join(dir, "garbled.parquet")
	bad := slices.Clone(data)
	for i := 4; i < len(bad)/2; i++ {
		bad[i] = 0xFF
	}
	if err := os.WriteFile(garbled, bad, 0o644); err != nil {
		t.Fatal(err)
	}

	t.Run("DiscoverNotParquet", func(t *testing.T) {
		_, err := stream.Discover([]string{fake})
		checkReadError(t, err, nil, fake, "", "not a Parquet")
	})
	for _, p := range []string{fake, truncated} {
		t.Run("Open"+filepath.Base(p), func(t *testing.T) {
			// Bypass sniffing: claim the format, as a caller could.
			_, err := stream.Open([]stream.File{{Path: p, Format: stream.Parquet}}, stream.Options{})
			checkReadError(t, err, nil, p, "", "")
		})
	}
	t.Run("DiscoverTruncated", func(t *testing.T) {
		_, err := stream.Discover([]string{truncated})
		checkReadError(t, err, nil, truncated, "", "not a Parquet")
	})
	t.Run("GarbledPages", func(t *testing.T) {
		ds, err := openPaths(t, stream.Options{}, garbled)
		if err != nil {
			t.Fatal(err)
		}
		_, _, err = readAll(t, ds, 100)
		checkReadError(t, err, nil, garbled, "", "")
	})
}

func TestZeroRows(t *testing.T) {
	p := tempPath(t, "empty.parquet")
	writePGo(t, p, newGen(0, 1))
	ds, err := openPaths(t, stream.Options{}, p)
	if err != nil {
		t.Fatal(err)
	}
	if ds.Rows != 0 {
		t.Fatalf("Rows = %d, want 0", ds.Rows)
	}
	got, _, err := readAll(t, ds, 10)
	if err != nil || len(got) != 0 {
		t.Fatalf("got %d rows, err %v; want 0 rows and no error", len(got), err)
	}
}

func TestNestedColumns(t *testing.T) {
	type inner struct {
		P float64 `parquet:"p"`
	}
	type row struct {
		A float64   `parquet:"a"`
		L []float64 `parquet:"l,list"`
		N inner     `parquet:"n"`
	}
	p := tempPath(t, "nested.parquet")
	fh, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	w := parquet.NewGenericWriter[row](fh)
	if _, err := w.Write([]row{{A: 1, L: []float64{1, 2}, N: inner{P: 3}}, {A: 2, N: inner{P: 4}}}); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	fh.Close()
	ds, err := openPaths(t, stream.Options{}, p)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(ds.Columns, []string{"a"}) {
		t.Fatalf("Columns = %v, want [a]", ds.Columns)
	}
	// A list of floats is a vector column, read only when named (vector_test.go).
	for _, ig := range ds.Ignored {
		want := map[string]string{"l": "a vector column: name it with --columns to read it", "n": "nested"}[ig.Name]
		if ig.Reason != want {
			t.Fatalf("Ignored %v: want reason %q", ig, want)
		}
	}
	if len(ds.Ignored) != 2 {
		t.Fatalf("Ignored = %v, want l and n", ds.Ignored)
	}
	got, _, err := readAll(t, ds, 1)
	if err != nil {
		t.Fatal(err)
	}
	compareRows(t, got, [][]float64{{1}, {2}}, 0)
	_, err = openPaths(t, stream.Options{Columns: []string{"n"}}, p)
	checkReadError(t, err, stream.ErrNotNumeric, p, "n", "nested")
}

func TestReadArguments(t *testing.T) {
	p := tempPath(t, "a.parquet")
	writePGo(t, p, newGen(20, 1))
	ds, err := openPaths(t, stream.Options{Columns: []string{"a", "c"}}, p)
	if err != nil {
		t.Fatal(err)
	}
	r, err := ds.OpenUnit(ds.Units[0])
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	for _, n := range []int{0, 3} {
		if _, err := r.Read(make([]float64, n)); err == nil {
			t.Fatalf("Read with len(dst) = %d: want an error", n)
		}
	}
	if _, err := ds.OpenUnit(stream.Unit{File: 5}); err == nil {
		t.Fatal("OpenUnit of a unit that does not exist: want an error")
	}
}

// TestReadAllocs checks that Read does not allocate per call in steady state:
// the decoder allocates only when it moves to a new page, so with pages of
// thousands of rows and 10-row reads the average stays far below one.
func TestReadAllocs(t *testing.T) {
	p := tempPath(t, "big.parquet")
	g := newGen(20000, 8)
	writePGo(t, p, g)
	ds, err := openPaths(t, stream.Options{Columns: []string{"a", "c", "e", "f"}}, p)
	if err != nil {
		t.Fatal(err)
	}
	if allocs := readAllocs(t, ds, 500); allocs > 0.2 {
		t.Fatalf("Read allocates %.2f times per call, want ~0", allocs)
	}
}

// readAllocs returns the allocations per 10-row Read of ds's first unit, over runs calls after
// one to warm up (the first pages or record batch).
func readAllocs(t *testing.T, ds *stream.Dataset, runs int) float64 {
	t.Helper()
	r, err := ds.OpenUnit(ds.Units[0])
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	buf := make([]float64, 10*ds.Dims())
	r.Read(buf)
	return testing.AllocsPerRun(runs, func() {
		if _, err := r.Read(buf); err != nil && err != io.EOF {
			t.Fatal(err)
		}
	})
}

// checkReadError fails unless err is a one-line *ReadError (wrapping sent when
// non-nil) naming file and column (when non-empty) with msg in its message.
func checkReadError(t *testing.T, err error, sent error, file, column, msg string) *stream.ReadError {
	t.Helper()
	if err == nil {
		t.Fatal("want an error, got nil")
	}
	var re *stream.ReadError
	if !errors.As(err, &re) {
		t.Fatalf("error %q (%T) is not a *ReadError", err, err)
	}
	if sent != nil && !errors.Is(err, sent) {
		t.Fatalf("error %q does not wrap %q", err, sent)
	}
	s := err.Error()
	if strings.Contains(s, "\n") || strings.HasPrefix(s, "stream: ") {
		t.Fatalf("error %q: want one line, in the user's terms (no package prefix)", s)
	}
	if file != "" && (re.File != file || !strings.Contains(s, file)) {
		t.Fatalf("error %q: want file %s", s, file)
	}
	if column != "" && (re.Column != column || !strings.Contains(s, `column "`+column+`"`)) {
		t.Fatalf("error %q: want column %q", s, column)
	}
	if !strings.Contains(s, msg) {
		t.Fatalf("error %q: want %q in it", s, msg)
	}
	return re
}

func itoa(n int) string { return strconv.Itoa(n) }

// TestLZ4Raw: LZ4_RAW column chunks read back exactly, in v1 and v2 pages, with and without
// dictionaries and nulls. parquet-go v0.32.0's own LZ4_RAW path returns a stale pooled buffer for
// pages of poorly compressible values (random doubles) whose output guess exceeds the buffer: with
// openLZ4Chunk switched off, the V1Fastest fixture (the fastest LZ4 level, 4 KiB pages) reads back
// wrong, so the exact comparison below fails if that path is ever taken again.
func TestLZ4Raw(t *testing.T) {
	g := newGen(3000, 3)
	want, wantSkipped := g.pgoWant()
	cases := []struct {
		name string
		opts []parquet.WriterOption
	}{
		{"V2", []parquet.WriterOption{parquet.Compression(&parquet.Lz4Raw), parquet.MaxRowsPerRowGroup(1000), parquet.PageBufferSize(1024)}},
		{"V1", []parquet.WriterOption{parquet.Compression(&parquet.Lz4Raw), parquet.DataPageVersion(1), parquet.PageBufferSize(700)}},
		{"V1Fastest", []parquet.WriterOption{parquet.Compression(&lz4.Codec{Level: lz4.Fastest}), parquet.DataPageVersion(1),
			parquet.MaxRowsPerRowGroup(1200), parquet.PageBufferSize(4096)}},
	}
	for _, tc := range cases {
		p := tempPath(t, tc.name+".parquet")
		writePGo(t, p, g, tc.opts...)
		if b, err := os.ReadFile(p); err == nil {
			os.WriteFile("/tmp/nc/"+tc.name+".parquet", b, 0o644)
		}
		for _, bs := range []int{1, 1000} {
			t.Run(tc.name+"/buf"+itoa(bs), func(t *testing.T) {
				ds, err := openPaths(t, stream.Options{}, p)
				if err != nil {
					t.Fatal(err)
				}
				defer ds.Close()
				got, skipped, err := readAll(t, ds, bs)
				if err != nil {
					t.Fatal(err)
				}
				compareRows(t, got, want, 0)
				if skipped != wantSkipped {
					t.Fatalf("Skipped = %d, want %d", skipped, wantSkipped)
				}
			})
		}
	}
}

// TestLZ4RawCorrupt: a damaged LZ4 block is an error naming the file and the column, not a panic or
// an ever larger buffer.
func TestLZ4RawCorrupt(t *testing.T) {
	p := tempPath(t, "lz4.parquet")
	writePGo(t, p, newGen(300, 3), parquet.Compression(&parquet.Lz4Raw), parquet.DataPageVersion(1))
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	pf, err := parquet.OpenFile(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		t.Fatal(err)
	}
	cm := pf.Metadata().RowGroups[0].Columns[0].MetaData
	// Overwrite 300 bytes of the first page's LZ4 block (its header is under 100 bytes, its block
	// about 500) with 0xFF: after them the decoder reads tokens claiming literal runs longer than
	// the block.
	mid := cm.DataPageOffset + 100
	for i := mid; i < mid+300; i++ {
		b[i] = 0xFF
	}
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
	ds, err := openPaths(t, stream.Options{}, p)
	if err == nil {
		defer ds.Close()
		_, _, err = readAll(t, ds, 100)
	}
	checkReadError(t, err, nil, p, pgoColumns[0], "LZ4_RAW")
}

// TestAllNullColumn: a numeric column whose every value is null (by the footer's statistics) is
// left out of the default selection with the reason "always null", instead of failing the run with
// no usable rows; named in Columns it is an error naming it.
func TestAllNullColumn(t *testing.T) {
	type row struct {
		A float64  `parquet:"a"`
		N *float64 `parquet:"n,optional"`
		B int64    `parquet:"b"`
	}
	p := tempPath(t, "nulls.parquet")
	fh, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	w := parquet.NewGenericWriter[row](fh, parquet.MaxRowsPerRowGroup(40))
	rows := make([]row, 100)
	for i := range rows {
		rows[i] = row{A: float64(i), B: int64(i % 7)}
	}
	if _, err := w.Write(rows); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	fh.Close()

	ds, err := openPaths(t, stream.Options{}, p)
	if err != nil {
		t.Fatal(err)
	}
	defer ds.Close()
	if !slices.Equal(ds.Columns, []string{"a", "b"}) {
		t.Errorf("Columns = %v, want [a b]", ds.Columns)
	}
	want := []stream.IgnoredColumn{{Name: "n", Type: "float64", Reason: "always null"}}
	if !slices.Equal(ds.Ignored, want) {
		t.Errorf("Ignored = %v, want %v", ds.Ignored, want)
	}
	got, skipped, err := readAll(t, ds, 64)
	if err != nil || len(got) != 100 || skipped != 0 {
		t.Errorf("read %d rows, %d skipped, %v; want 100, 0", len(got), skipped, err)
	}

	_, err = openPaths(t, stream.Options{Columns: []string{"a", "n"}}, p)
	checkReadError(t, err, stream.ErrOnlyNulls, p, "n", "only nulls")
}
