package stream_test

import (
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"runtime"
	"slices"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/ipc"
	"github.com/apache/arrow/go/v17/arrow/memory"
	apq "github.com/apache/arrow/go/v17/parquet"
	"github.com/apache/arrow/go/v17/parquet/compress"
	"github.com/apache/arrow/go/v17/parquet/pqarrow"
	"github.com/parquet-go/parquet-go"

	"github.com/kgauge/kgauge/stream"
)

// vecData is a table of a scalar column "id" and a vector column "emb" of width values per row.
// Rows in nullList have a null list, rows in nullElem a null element; badLen, when >= 0, is a row
// whose list has one value more than the others.
type vecData struct {
	id       []float64
	emb      [][]float64
	width    int
	nullList map[int]bool
	nullElem map[int]bool
	badLen   int
}

func newVecData(n, width int, seed uint64, badLen int) *vecData {
	r := rand.New(rand.NewPCG(seed, 7))
	v := &vecData{width: width, nullList: map[int]bool{}, nullElem: map[int]bool{}, badLen: badLen}
	for i := 0; i < n; i++ {
		v.id = append(v.id, float64(i))
		e := make([]float64, width)
		for j := range e {
			e[j] = float64(float32(r.NormFloat64() * 10)) // exact in float32
		}
		if i == badLen {
			e = append(e, 1)
		}
		v.emb = append(v.emb, e)
		switch {
		case i == badLen:
		case i%17 == 3:
			v.nullList[i] = true
		case i%29 == 5:
			v.nullElem[i] = true
		}
	}
	return v
}

// want returns the rows a reader must give for columns id, emb[0..width) and the rows skipped.
func (v *vecData) want(withID bool) ([][]float64, int64) {
	var rows [][]float64
	var skipped int64
	for i := range v.id {
		if v.nullList[i] || v.nullElem[i] {
			skipped++
			continue
		}
		var row []float64
		if withID {
			row = append(row, v.id[i])
		}
		rows = append(rows, append(row, v.emb[i]...))
	}
	return rows, skipped
}

// records builds Arrow records of batch rows: id float64, emb list<float32> (or a fixed-size list
// of float64 when fixed).
func (v *vecData) records(batch int, fixed bool) (*arrow.Schema, []arrow.Record) {
	var embType arrow.DataType = arrow.ListOf(arrow.PrimitiveTypes.Float32)
	if fixed {
		embType = arrow.FixedSizeListOf(int32(v.width), arrow.PrimitiveTypes.Float64)
	}
	schema := arrow.NewSchema([]arrow.Field{
		{Name: "id", Type: arrow.PrimitiveTypes.Float64},
		{Name: "emb", Type: embType, Nullable: true},
	}, nil)
	var recs []arrow.Record
	for lo := 0; lo < len(v.id); lo += batch {
		b := array.NewRecordBuilder(memory.DefaultAllocator, schema)
		for i := lo; i < min(lo+batch, len(v.id)); i++ {
			b.Field(0).(*array.Float64Builder).Append(v.id[i])
			lb := b.Field(1).(array.ListLikeBuilder)
			if v.nullList[i] {
				lb.AppendNull()
				continue
			}
			lb.Append(true)
			for j, x := range v.emb[i] {
				switch vb := lb.ValueBuilder().(type) {
				case *array.Float32Builder:
					if v.nullElem[i] && j == 1 {
						vb.AppendNull()
					} else {
						vb.Append(float32(x))
					}
				case *array.Float64Builder:
					if v.nullElem[i] && j == 1 {
						vb.AppendNull()
					} else {
						vb.Append(x)
					}
				}
			}
		}
		recs = append(recs, b.NewRecord())
		b.Release()
	}
	return schema, recs
}

func (v *vecData) writeArrowParquet(t testing.TB, path string, props ...apq.WriterProperty) {
	t.Helper()
	schema, recs := v.records(300, false)
	fh, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	w, err := pqarrow.NewFileWriter(schema, fh, apq.NewWriterProperties(props...), pqarrow.DefaultWriterProps())
	if err != nil {
		t.Fatal(err)
	}
	for _, rec := range recs {
		if err := w.Write(rec); err != nil {
			t.Fatal(err)
		}
		rec.Release()
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

func (v *vecData) writeArrowIPC(t testing.TB, path string, fixed, file bool) {
	t.Helper()
	schema, recs := v.records(250, fixed)
	fh, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	type writer interface {
		Write(arrow.Record) error
		Close() error
	}
	var w writer = ipc.NewWriter(fh, ipc.WithSchema(schema))
	if file {
		fw, err := ipc.NewFileWriter(fh, ipc.WithSchema(schema))
		if err != nil {
			t.Fatal(err)
		}
		w = fw
	}
	for _, rec := range recs {
		if err := w.Write(rec); err != nil {
			t.Fatal(err)
		}
		rec.Release()
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

// pgoListRow is written by parquet-go with the three-level LIST layout; pgoBareRow with a bare
// repeated column.
type pgoListRow struct {
	ID  float64   `parquet:"id"`
	Emb []float32 `parquet:"emb,list"`
}

type pgoBareRow struct {
	ID  float64   `parquet:"id"`
	Emb []float64 `parquet:"emb"`
}

func writePGoVectors[R any](t *testing.T, path string, v *vecData, row func(i int) R, opts ...parquet.WriterOption) {
	t.Helper()
	fh, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	w := parquet.NewGenericWriter[R](fh, opts...)
	for lo := 0; lo < len(v.id); lo += 400 {
		var rows []R
		for i := lo; i < min(lo+400, len(v.id)); i++ {
			rows = append(rows, row(i))
		}
		if _, err := w.Write(rows); err != nil {
			t.Fatal(err)
		}
		if err := w.Flush(); err != nil { // one row group per 400 rows
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

// TestVectorColumns reads a list column of floats written by Arrow's Parquet writer (v1 and v2
// pages, dictionary and plain, small pages), by parquet-go (three-level LIST and bare repeated) and
// as Arrow IPC (list and fixed-size list, file and stream): every row's list becomes width
// dimensions named emb[j], rows with a null list or a null element are skipped and counted, and
// Read and ReadColumns agree at every buffer size.
func TestVectorColumns(t *testing.T) {
	const n, width = 1300, 6
	v := newVecData(n, width, 3, -1)
	// parquet-go writes no nulls here: a nil slice is an empty list, which is a null row too.
	pgo := newVecData(n, width, 4, -1)
	for i := range pgo.id {
		if pgo.nullElem[i] {
			delete(pgo.nullElem, i)
		}
	}
	dir := t.TempDir()
	type input struct {
		name string
		data *vecData
		path string
	}
	var inputs []input
	add := func(name string, data *vecData, write func(path string)) {
		p := dir + "/" + name
		write(p)
		inputs = append(inputs, input{name, data, p})
	}
	add("arrow-v1-dict.parquet", v, func(p string) {
		v.writeArrowParquet(t, p, apq.WithCompression(compress.Codecs.Snappy), apq.WithDictionaryDefault(true),
			apq.WithMaxRowGroupLength(500), apq.WithDataPageSize(512))
	})
	add("arrow-v2-plain.parquet", v, func(p string) {
		// Default page size: Arrow's writer v17 splits a row's list across v2 pages when pages are
		// small, which the format forbids (parquet-go then refuses the page with a clear error).
		v.writeArrowParquet(t, p, apq.WithCompression(compress.Codecs.Zstd), apq.WithDictionaryDefault(false),
			apq.WithDataPageVersion(apq.DataPageV2), apq.WithMaxRowGroupLength(700))
	})
	add("arrow-list.arrow", v, func(p string) { v.writeArrowIPC(t, p, false, true) })
	add("arrow-fixed.arrows", v, func(p string) { v.writeArrowIPC(t, p, true, false) })
	add("pgo-list.parquet", pgo, func(p string) {
		writePGoVectors(t, p, pgo, func(i int) pgoListRow {
			r := pgoListRow{ID: pgo.id[i]}
			if !pgo.nullList[i] {
				for _, x := range pgo.emb[i] {
					r.Emb = append(r.Emb, float32(x))
				}
			}
			return r
		}, parquet.PageBufferSize(700))
	})
	add("pgo-bare.parquet", pgo, func(p string) {
		writePGoVectors(t, p, pgo, func(i int) pgoBareRow {
			r := pgoBareRow{ID: pgo.id[i]}
			if !pgo.nullList[i] {
				r.Emb = pgo.emb[i]
			}
			return r
		})
	})
	for _, in := range inputs {
		t.Run(in.name, func(t *testing.T) {
			// Not named: the vector column is left out, with the reason.
			ds, err := openPaths(t, stream.Options{}, in.path)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(ds.Columns, []string{"id"}) {
				t.Fatalf("Columns = %v, want [id]", ds.Columns)
			}
			if len(ds.Ignored) != 1 || ds.Ignored[0].Name != "emb" || !strings.Contains(ds.Ignored[0].Reason, "vector column") {
				t.Fatalf("Ignored = %v, want emb as a vector column", ds.Ignored)
			}
			for _, cols := range [][]string{{"id", "emb"}, {"emb"}} {
				ds, err := openPaths(t, stream.Options{Columns: cols}, in.path)
				if err != nil {
					t.Fatal(err)
				}
				withID := len(cols) == 2
				wantCols := []string{"emb[0]", "emb[1]", "emb[2]", "emb[3]", "emb[4]", "emb[5]"}
				if withID {
					wantCols = append([]string{"id"}, wantCols...)
				}
				if !slices.Equal(ds.Columns, wantCols) {
					t.Fatalf("Columns = %v, want %v", ds.Columns, wantCols)
				}
				want, wantSkipped := in.data.want(withID)
				for _, bs := range []int{1, 7, 5000} {
					got, skipped, err := readAll(t, ds, bs)
					if err != nil {
						t.Fatalf("columns %v, buffer %d: %v", cols, bs, err)
					}
					compareRows(t, got, want, 0)
					if skipped != wantSkipped {
						t.Fatalf("columns %v, buffer %d: skipped %d rows, want %d", cols, bs, skipped, wantSkipped)
					}
				}
			}
		})
	}
}

// TestVectorLengthMismatch: a row whose list is longer than the others is an error naming the file,
// the column and the row, from every reader.
func TestVectorLengthMismatch(t *testing.T) {
	const bad = 777
	v := newVecData(1000, 4, 5, bad)
	dir := t.TempDir()
	paths := map[string]func(string){
		"arrow.parquet": func(p string) { v.writeArrowParquet(t, p, apq.WithMaxRowGroupLength(600)) },
		"list.arrow":    func(p string) { v.writeArrowIPC(t, p, false, true) },
	}
	for name, write := range paths {
		t.Run(name, func(t *testing.T) {
			p := dir + "/" + name
			write(p)
			ds, err := openPaths(t, stream.Options{Columns: []string{"emb"}}, p)
			if err != nil {
				t.Fatal(err)
			}
			// Read and ReadColumns (whose vector rows go to the columns in blocks) name the same row.
			for _, read := range []func(testing.TB, *stream.Dataset, int) ([][]float64, int64, []int64, error){readRows, readColumns} {
				_, _, _, err = read(t, ds, 64)
				re := checkReadError(t, err, stream.ErrVectorLength, p, "emb", "a list of 5 values, where the column's lists hold 4")
				// Rows of an Arrow IPC file count within its record batch (of 250 rows here).
				row, unit := int64(bad), -1
				if strings.HasSuffix(name, ".arrow") {
					row, unit = bad%250, bad/250
				}
				if re.Row != row || unit >= 0 && re.Unit != unit {
					t.Fatalf("error names unit %d row %d, want row %d (unit %d)", re.Unit, re.Row, row, unit)
				}
			}
		})
	}
}

// TestVectorWidthDiffersBetweenFiles: two files whose lists differ in length cannot be read as one
// column.
func TestVectorWidthDiffersBetweenFiles(t *testing.T) {
	dir := t.TempDir()
	a, b := dir+"/a.arrow", dir+"/b.arrow"
	newVecData(50, 4, 1, -1).writeArrowIPC(t, a, true, true)
	newVecData(50, 5, 1, -1).writeArrowIPC(t, b, true, true)
	_, err := openPaths(t, stream.Options{Columns: []string{"emb"}}, a, b)
	checkReadError(t, err, stream.ErrVectorLength, b, "emb", "lists of 5 values here, of 4 in")
}

// TestVectorInfinite: an infinite element names its dimension.
func TestVectorInfinite(t *testing.T) {
	v := newVecData(100, 3, 2, -1)
	v.nullList, v.nullElem = map[int]bool{}, map[int]bool{}
	v.emb[40][2] = math.Inf(1)
	dir := t.TempDir()
	pq, ar := dir+"/inf.parquet", dir+"/inf.arrow"
	v.writeArrowParquet(t, pq)
	v.writeArrowIPC(t, ar, false, true)
	for _, p := range []string{pq, ar} {
		ds, err := openPaths(t, stream.Options{Columns: []string{"emb"}}, p)
		if err != nil {
			t.Fatal(err)
		}
		for _, read := range []func(testing.TB, *stream.Dataset, int) ([][]float64, int64, []int64, error){readRows, readColumns} {
			_, _, _, err = read(t, ds, 16)
			if !errors.Is(err, stream.ErrInfinite) {
				t.Fatalf("%s: err = %v, want ErrInfinite", p, err)
			}
			if re := checkReadError(t, err, stream.ErrInfinite, p, "emb[2]", ""); re.Row != 40 {
				t.Fatalf("%s: error names row %d, want 40", p, re.Row)
			}
		}
	}
}

// BenchmarkVectorColumns reads a list column of 768 float32 values (20,000 rows, written by Arrow
// as Parquet and as an Arrow IPC file) with ReadColumns: one column per value, the layout the
// sketch takes.
func BenchmarkVectorColumns(b *testing.B) {
	const n, width = 20000, 768
	v := newVecData(n, width, 9, -1)
	v.nullList, v.nullElem = map[int]bool{}, map[int]bool{}
	dir := b.TempDir()
	files := map[string]string{"parquet": dir + "/emb.parquet", "arrow": dir + "/emb.arrow"}
	v.writeArrowParquet(b, files["parquet"])
	v.writeArrowIPC(b, files["arrow"], false, true)
	for _, name := range []string{"parquet", "arrow"} {
		b.Run(name, func(b *testing.B) {
			ds, err := openPaths(b, stream.Options{Columns: []string{"emb"}}, files[name])
			if err != nil {
				b.Fatal(err)
			}
			b.SetBytes(n * width * 4)
			var sum float64
			for b.Loop() {
				_, _, _, err := readUnits(ds, func(r *stream.UnitReader) ([][]float64, error) {
					cols, err := r.ReadColumns(4096)
					if err == nil {
						sum += cols[width-1][len(cols[0])-1]
					}
					return nil, err
				})
				if err != nil {
					b.Fatal(err)
				}
			}
			if math.IsNaN(sum) {
				b.Fatal("a NaN read")
			}
		})
	}
}

// TestReadColumnsReusesBuffers: the per-column buffers of ReadColumns pass from a closed reader to
// the next unit's, so reading an Arrow IPC file of many small record batches allocates about one
// set of them, not one per batch (here 40 batches; a set of 256 columns × 4,096 rows is 8 MiB).
// It fails when the buffers are not passed on.
func TestReadColumnsReusesBuffers(t *testing.T) {
	const n, width, max = 10000, 256, 4096
	v := newVecData(n, width, 11, -1)
	p := t.TempDir() + "/emb.arrow"
	v.writeArrowIPC(t, p, false, true)
	ds, err := openPaths(t, stream.Options{Columns: []string{"emb"}}, p)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Units) < 40 {
		t.Fatalf("%d units, want at least 40 record batches", len(ds.Units))
	}
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	rows := 0
	_, _, _, err = readUnits(ds, func(r *stream.UnitReader) ([][]float64, error) {
		cols, err := r.ReadColumns(max)
		if err == nil {
			rows += len(cols[0])
		}
		return nil, err
	})
	runtime.ReadMemStats(&after)
	if err != nil {
		t.Fatal(err)
	}
	if want, _ := v.want(false); rows != len(want) {
		t.Fatalf("read %d rows, want %d", rows, len(want))
	}
	// A set per batch measured 42.6 sets' worth in all, the buffers passed on 3.6. Under the race
	// detector sync.Pool drops a quarter of what it is given, at random: 15.6 there.
	set := uint64(width * max * 8)
	if got := after.TotalAlloc - before.TotalAlloc; got > 25*set {
		t.Fatalf("reading %d batches allocated %d MiB, %.1f sets of the columns' buffers", len(ds.Units), got>>20, float64(got)/float64(set))
	}
}

// TestVectorReadAllocs: Read of an Arrow IPC vector column does not allocate per call in steady
// state (the record batch is decoded once; 10-row reads then copy from it).
func TestVectorReadAllocs(t *testing.T) {
	v := newVecData(2000, 16, 12, -1)
	v.nullList, v.nullElem = map[int]bool{}, map[int]bool{}
	p := t.TempDir() + "/emb.arrows"
	v.writeArrowIPC(t, p, false, false)
	ds, err := openPaths(t, stream.Options{Columns: []string{"id", "emb"}}, p)
	if err != nil {
		t.Fatal(err)
	}
	if allocs := readAllocs(t, ds, 20); allocs > 0.2 {
		t.Fatalf("Read allocates %.2f times per call, want ~0", allocs)
	}
}
