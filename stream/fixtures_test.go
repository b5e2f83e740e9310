package stream_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"testing"
	"time"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/decimal128"
	"github.com/apache/arrow/go/v17/arrow/float16"
	"github.com/apache/arrow/go/v17/arrow/ipc"
	"github.com/apache/arrow/go/v17/arrow/memory"
	apq "github.com/apache/arrow/go/v17/parquet"
	"github.com/apache/arrow/go/v17/parquet/pqarrow"
	"github.com/parquet-go/parquet-go"

	"github.com/kgauge/kgauge/stream"
)

// genData is invented test data (for property tests only): the writers'
// input, from which the expected rows are computed independently of the
// reader under test.
type genData struct {
	n            int
	a            []float64 // NaN at i%97 == 5
	b            []float64
	bNull        []bool // i%13 == 7
	c            []float32
	d            []int32 // few distinct values (dictionary friendly)
	e            []int64
	f            []int64 // unscaled decimal
	g            []int32 // unscaled decimal
	h            []float64
	hNull        []bool // i%11 == 3
	u            []uint16
	s            []string
	t            []time.Time
	infRow, infC int // when infRow >= 0, a[infRow] = +Inf
}

func newGen(n int, seed uint64) *genData {
	r := rand.New(rand.NewPCG(seed, 1))
	g := &genData{n: n, infRow: -1}
	for i := 0; i < n; i++ {
		a := r.NormFloat64() * 10
		if i%97 == 5 {
			a = math.NaN()
		}
		g.a = append(g.a, a)
		g.b = append(g.b, r.Float64())
		g.bNull = append(g.bNull, i%13 == 7)
		g.c = append(g.c, float32(r.NormFloat64()))
		g.d = append(g.d, int32(r.IntN(7))-3)
		g.e = append(g.e, r.Int64N(1<<40)-1<<39)
		g.f = append(g.f, r.Int64N(2_000_000)-1_000_000)
		g.g = append(g.g, int32(r.IntN(2_000_000))-1_000_000)
		g.h = append(g.h, float64(r.IntN(5))*0.5)
		g.hNull = append(g.hNull, i%11 == 3)
		g.u = append(g.u, uint16(i*7919))
		g.s = append(g.s, fmt.Sprint("id", i%17))
		g.t = append(g.t, time.Unix(int64(i)*3600, 0).UTC())
	}
	return g
}

// pgoRow is the row type written with parquet-go's writer.
type pgoRow struct {
	A float64   `parquet:"a"`
	B *float64  `parquet:"b,optional"`
	C float32   `parquet:"c"`
	D int32     `parquet:"d,dict"`
	E int64     `parquet:"e"`
	F int64     `parquet:"f,decimal(2:18)"`
	G int32     `parquet:"g,decimal(3:9)"`
	H *float64  `parquet:"h,optional,dict"`
	S string    `parquet:"s"`
	T time.Time `parquet:"t"`
}

// pgoColumns are the numeric columns of pgoRow in schema order.
var pgoColumns = []string{"a", "b", "c", "d", "e", "f", "g", "h"}

// pgoWant returns the rows expected from a pgoRow file and the number of rows
// with a null or NaN.
func (g *genData) pgoWant() ([][]float64, int64) {
	var rows [][]float64
	var skipped int64
	for i := 0; i < g.n; i++ {
		if math.IsNaN(g.a[i]) || g.bNull[i] || g.hNull[i] {
			skipped++
			continue
		}
		rows = append(rows, []float64{g.a[i], g.b[i], float64(g.c[i]), float64(g.d[i]), float64(g.e[i]),
			float64(g.f[i]) / 100, float64(g.g[i]) / 1000, g.h[i]})
	}
	return rows, skipped
}

// writePGo writes g with parquet-go's writer.
func writePGo(t testing.TB, path string, g *genData, opts ...parquet.WriterOption) {
	t.Helper()
	fh, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	w := parquet.NewGenericWriter[pgoRow](fh, opts...)
	rows := make([]pgoRow, g.n)
	for i := range rows {
		rows[i] = pgoRow{A: g.a[i], C: g.c[i], D: g.d[i], E: g.e[i], F: g.f[i], G: g.g[i], S: g.s[i], T: g.t[i]}
		if !g.bNull[i] {
			rows[i].B = &g.b[i]
		}
		if !g.hNull[i] {
			rows[i].H = &g.h[i]
		}
	}
	if g.infRow >= 0 {
		rows[g.infRow].A = math.Inf(1)
	}
	if _, err := w.Write(rows); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

// arrowColumns are the numeric columns of arrowSchema in schema order.
var arrowColumns = []string{"x", "y", "i32", "i64", "u16", "dec"}

func arrowSchema(f16 bool) *arrow.Schema {
	fields := []arrow.Field{
		{Name: "x", Type: arrow.PrimitiveTypes.Float64, Nullable: true},
		{Name: "y", Type: arrow.PrimitiveTypes.Float32},
		{Name: "i32", Type: arrow.PrimitiveTypes.Int32},
		{Name: "i64", Type: arrow.PrimitiveTypes.Int64},
		{Name: "u16", Type: arrow.PrimitiveTypes.Uint16},
		{Name: "dec", Type: &arrow.Decimal128Type{Precision: 12, Scale: 3}},
		{Name: "s", Type: arrow.BinaryTypes.String},
		{Name: "day", Type: arrow.FixedWidthTypes.Date32},
		{Name: "ts", Type: arrow.FixedWidthTypes.Timestamp_ms},
	}
	if f16 {
		fields = append(fields, arrow.Field{Name: "h16", Type: arrow.FixedWidthTypes.Float16})
	}
	return arrow.NewSchema(fields, nil)
}

// arrowWant returns the rows expected from arrowRecords and the number of
// rows with a null or NaN.
func (g *genData) arrowWant(f16 bool) ([][]float64, int64) {
	var rows [][]float64
	var skipped int64
	for i := 0; i < g.n; i++ {
		if math.IsNaN(g.a[i]) || g.bNull[i] {
			skipped++
			continue
		}
		row := []float64{g.a[i], float64(g.c[i]), float64(g.d[i]), float64(g.e[i]), float64(g.u[i]), float64(g.f[i]) / 1000}
		if f16 {
			row = append(row, g.h[i]) // multiples of 0.5 are exact in float16
		}
		rows = append(rows, row)
	}
	return rows, skipped
}

// arrowRecords builds g as Arrow record batches of batch rows; x is null
// where bNull is set.
func arrowRecords(g *genData, batch int, f16 bool) []arrow.Record {
	schema := arrowSchema(f16)
	var recs []arrow.Record
	for lo := 0; lo < g.n; lo += batch {
		hi := min(lo+batch, g.n)
		b := array.NewRecordBuilder(memory.DefaultAllocator, schema)
		for i := lo; i < hi; i++ {
			x := g.a[i]
			if i == g.infRow {
				x = math.Inf(-1)
			}
			if g.bNull[i] {
				b.Field(0).(*array.Float64Builder).AppendNull()
			} else {
				b.Field(0).(*array.Float64Builder).Append(x)
			}
			b.Field(1).(*array.Float32Builder).Append(g.c[i])
			b.Field(2).(*array.Int32Builder).Append(g.d[i])
			b.Field(3).(*array.Int64Builder).Append(g.e[i])
			b.Field(4).(*array.Uint16Builder).Append(g.u[i])
			b.Field(5).(*array.Decimal128Builder).Append(decimal128.FromI64(g.f[i]))
			b.Field(6).(*array.StringBuilder).Append(g.s[i])
			b.Field(7).(*array.Date32Builder).Append(arrow.Date32FromTime(g.t[i]))
			b.Field(8).(*array.TimestampBuilder).Append(arrow.Timestamp(g.t[i].UnixMilli()))
			if f16 {
				b.Field(9).(*array.Float16Builder).Append(float16.New(float32(g.h[i])))
			}
		}
		recs = append(recs, b.NewRecord())
		b.Release()
	}
	return recs
}

// writeArrowParquet writes g with Arrow's Parquet writer (pqarrow).
func writeArrowParquet(t testing.TB, path string, g *genData, props ...apq.WriterProperty) {
	t.Helper()
	fh, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	w, err := pqarrow.NewFileWriter(arrowSchema(false), fh, apq.NewWriterProperties(props...), pqarrow.DefaultWriterProps())
	if err != nil {
		t.Fatal(err)
	}
	for _, rec := range arrowRecords(g, 400, false) {
		if err := w.Write(rec); err != nil {
			t.Fatal(err)
		}
		rec.Release()
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

// writeArrowIPC writes g as an Arrow IPC file or stream in batches of batch rows.
func writeArrowIPC(t testing.TB, path string, g *genData, batch int, file bool) {
	t.Helper()
	fh, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	type writer interface {
		Write(arrow.Record) error
		Close() error
	}
	var w writer
	if file {
		fw, err := ipc.NewFileWriter(fh, ipc.WithSchema(arrowSchema(true)))
		if err != nil {
			t.Fatal(err)
		}
		w = fw
	} else {
		w = ipc.NewWriter(fh, ipc.WithSchema(arrowSchema(true)))
	}
	for _, rec := range arrowRecords(g, batch, true) {
		if err := w.Write(rec); err != nil {
			t.Fatal(err)
		}
		rec.Release()
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

// readAll reads every unit of ds in order with a buffer of bufRows rows.
// readAll reads every unit of ds with Read and a bufRows-row buffer, and again with ReadColumns and
// at most bufRows rows per call, and fails unless both ways give the same rows and skip counts, or
// both fail. It returns what Read gave.
func readAll(t testing.TB, ds *stream.Dataset, bufRows int) ([][]float64, int64, error) {
	t.Helper()
	rows, skipped, byCol, err := readRows(t, ds, bufRows)
	cRows, cSkipped, cByCol, cErr := readColumns(t, ds, bufRows)
	switch {
	case (err == nil) != (cErr == nil):
		t.Fatalf("Read gave error %v, ReadColumns %v", err, cErr)
	case err == nil && (skipped != cSkipped || !slices.Equal(byCol, cByCol)):
		t.Fatalf("Read skipped %d rows (%v by column), ReadColumns %d (%v)", skipped, byCol, cSkipped, cByCol)
	case err == nil && !slices.EqualFunc(rows, cRows, slices.Equal[[]float64]):
		t.Fatalf("Read and ReadColumns gave different rows (%d and %d)", len(rows), len(cRows))
	}
	return rows, skipped, err
}

// readRows reads every unit with Read into a bufRows-row buffer.
func readRows(t testing.TB, ds *stream.Dataset, bufRows int) ([][]float64, int64, []int64, error) {
	t.Helper()
	d := ds.Dims()
	buf := make([]float64, bufRows*d)
	return readUnits(ds, func(r *stream.UnitReader) ([][]float64, error) {
		n, err := r.Read(buf)
		if n > bufRows {
			t.Fatalf("Read returned %d rows for a %d-row buffer", n, bufRows)
		}
		var rows [][]float64
		for i := 0; i < n; i++ {
			rows = append(rows, append([]float64(nil), buf[i*d:(i+1)*d]...))
		}
		return rows, err
	})
}

// readColumns reads every unit with ReadColumns, at most maxRows rows per call, and returns rows.
func readColumns(t testing.TB, ds *stream.Dataset, maxRows int) ([][]float64, int64, []int64, error) {
	t.Helper()
	return readUnits(ds, func(r *stream.UnitReader) ([][]float64, error) {
		cols, err := r.ReadColumns(maxRows)
		if err != nil {
			return nil, err
		}
		if len(cols) != ds.Dims() || len(cols[0]) == 0 || len(cols[0]) > maxRows {
			t.Fatalf("ReadColumns returned %d columns of %d rows (max %d)", len(cols), len(cols[0]), maxRows)
		}
		rows := make([][]float64, len(cols[0]))
		for i := range rows {
			rows[i] = make([]float64, len(cols))
			for j, c := range cols {
				if len(c) != len(cols[0]) {
					t.Fatalf("ReadColumns returned columns of %d and %d rows", len(cols[0]), len(c))
				}
				rows[i][j] = c[i]
			}
		}
		return rows, nil
	})
}

// readUnits opens every unit of ds and calls next until it returns an error, keeping the rows it
// returns (also those it returns with the error); it returns the rows, the skip counts, and the
// first error other than io.EOF.
func readUnits(ds *stream.Dataset, next func(*stream.UnitReader) ([][]float64, error)) ([][]float64, int64, []int64, error) {
	var rows [][]float64
	var skipped int64
	byCol := make([]int64, ds.Dims())
	for _, u := range ds.Units {
		r, err := ds.OpenUnit(u)
		if err != nil {
			return rows, skipped, byCol, err
		}
		for {
			got, err := next(r)
			rows = append(rows, got...)
			if err != nil {
				skipped += r.Skipped()
				addCounts(byCol, r.SkippedByColumn())
				r.Close()
				if err.Error() == "EOF" {
					break
				}
				return rows, skipped, byCol, err
			}
		}
	}
	return rows, skipped, byCol, nil
}

func addCounts(dst, src []int64) {
	for j, c := range src {
		dst[j] += c
	}
}

func openPaths(t testing.TB, opt stream.Options, paths ...string) (*stream.Dataset, error) {
	t.Helper()
	files, err := stream.Discover(paths)
	if err != nil {
		t.Fatalf("Discover: %v", err)
	}
	return stream.Open(files, opt)
}

// compareRows fails unless got equals want, exactly or within relative tol.
func compareRows(t *testing.T, got, want [][]float64, tol float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("got %d rows, want %d", len(got), len(want))
	}
	for i := range want {
		if len(got[i]) != len(want[i]) {
			t.Fatalf("row %d: got %d values, want %d", i, len(got[i]), len(want[i]))
		}
		for j := range want[i] {
			g, w := got[i][j], want[i][j]
			if g != w && math.Abs(g-w) > tol*math.Max(1, math.Abs(w)) {
				t.Fatalf("row %d col %d: got %v, want %v", i, j, g, w)
			}
		}
	}
}

func tempPath(t testing.TB, name string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		t.Fatal(err)
	}
	return p
}
