package stream_test

import (
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"github.com/parquet-go/parquet-go"

	"github.com/kgauge/kgauge/stream"
)

// benchRows x 16 required float64, uncompressed, parquet-go writer defaults
// otherwise (PLAIN, data page v2).
const benchRows = 1 << 20

type benchRow struct {
	C0, C1, C2, C3, C4, C5, C6, C7, C8, C9, C10, C11, C12, C13, C14, C15 float64
}

func writeBenchFile(b *testing.B, opts ...parquet.WriterOption) string {
	b.Helper()
	p := filepath.Join(b.TempDir(), "bench.parquet")
	fh, err := os.Create(p)
	if err != nil {
		b.Fatal(err)
	}
	defer fh.Close()
	w := parquet.NewGenericWriter[benchRow](fh, append([]parquet.WriterOption{parquet.MaxRowsPerRowGroup(128 << 10)}, opts...)...)
	r := rand.New(rand.NewPCG(1, 2))
	rows := make([]benchRow, 8192)
	for done := 0; done < benchRows; done += len(rows) {
		for i := range rows {
			rows[i] = benchRow{r.Float64(), r.Float64(), r.Float64(), r.Float64(), r.Float64(), r.Float64(), r.Float64(), r.Float64(),
				r.Float64(), r.Float64(), r.Float64(), r.Float64(), r.Float64(), r.Float64(), r.Float64(), r.Float64()}
		}
		if _, err := w.Write(rows); err != nil {
			b.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		b.Fatal(err)
	}
	return p
}

// openBench opens the benchmark file at p.
func openBench(b *testing.B, p string) *stream.Dataset {
	b.Helper()
	files, err := stream.Discover([]string{p})
	if err != nil {
		b.Fatal(err)
	}
	ds, err := stream.Open(files, stream.Options{})
	if err != nil {
		b.Fatal(err)
	}
	return ds
}

// BenchmarkParquetScan reads every row through Dataset/UnitReader with a
// 4096-row buffer.
func BenchmarkParquetScan(b *testing.B) {
	p := writeBenchFile(b)
	ds := openBench(b, p)
	buf := make([]float64, 4096*ds.Dims())
	b.SetBytes(benchRows * 16 * 8)
	b.ResetTimer()
	var sum float64
	for i := 0; i < b.N; i++ {
		rows := 0
		for _, u := range ds.Units {
			r, err := ds.OpenUnit(u)
			if err != nil {
				b.Fatal(err)
			}
			for {
				n, err := r.Read(buf)
				rows += n
				for _, v := range buf[:n*16] {
					sum += v
				}
				if err == io.EOF {
					break
				}
				if err != nil {
					b.Fatal(err)
				}
			}
			r.Close()
		}
		if rows != benchRows {
			b.Fatalf("read %d rows, want %d", rows, benchRows)
		}
	}
	b.ReportMetric(float64(benchRows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
	_ = sum
}

// BenchmarkParquetScanCodec is BenchmarkParquetScan on the same rows compressed with each codec,
// side by side: LZ4_RAW goes through kgauge's own page decoding (lz4raw.go), the others through
// parquet-go's.
func BenchmarkParquetScanCodec(b *testing.B) {
	for _, c := range []struct {
		name  string
		codec parquet.WriterOption
	}{
		{"snappy", parquet.Compression(&parquet.Snappy)},
		{"zstd", parquet.Compression(&parquet.Zstd)},
		{"lz4raw", parquet.Compression(&parquet.Lz4Raw)},
	} {
		b.Run(c.name, func(b *testing.B) {
			ds := openBench(b, writeBenchFile(b, c.codec))
			buf := make([]float64, 4096*ds.Dims())
			b.SetBytes(benchRows * 16 * 8)
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				rows := 0
				for _, u := range ds.Units {
					r, err := ds.OpenUnit(u)
					if err != nil {
						b.Fatal(err)
					}
					for {
						n, err := r.Read(buf)
						rows += n
						if err == io.EOF {
							break
						}
						if err != nil {
							b.Fatal(err)
						}
					}
					r.Close()
				}
				if rows != benchRows {
					b.Fatalf("read %d rows, want %d", rows, benchRows)
				}
			}
		})
	}
}

// BenchmarkParquetScanColumns reads every row through ReadColumns, at most 4096 rows per call.
func BenchmarkParquetScanColumns(b *testing.B) {
	p := writeBenchFile(b)
	ds := openBench(b, p)
	b.SetBytes(benchRows * 16 * 8)
	b.ResetTimer()
	var sum float64
	for i := 0; i < b.N; i++ {
		rows := 0
		for _, u := range ds.Units {
			r, err := ds.OpenUnit(u)
			if err != nil {
				b.Fatal(err)
			}
			for {
				cols, err := r.ReadColumns(4096)
				if err == io.EOF {
					break
				}
				if err != nil {
					b.Fatal(err)
				}
				rows += len(cols[0])
				for _, c := range cols {
					for _, v := range c {
						sum += v
					}
				}
			}
			r.Close()
		}
		if rows != benchRows {
			b.Fatalf("read %d rows, want %d", rows, benchRows)
		}
	}
	b.ReportMetric(float64(benchRows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
	_ = sum
}

// BenchmarkParquetScanBare is the baseline: the same pages through
// parquet-go's page API, summing Page.Data().Double() directly.
func BenchmarkParquetScanBare(b *testing.B) {
	p := writeBenchFile(b)
	fh, err := os.Open(p)
	if err != nil {
		b.Fatal(err)
	}
	defer fh.Close()
	fi, _ := fh.Stat()
	pf, err := parquet.OpenFile(fh, fi.Size())
	if err != nil {
		b.Fatal(err)
	}
	b.SetBytes(benchRows * 16 * 8)
	b.ResetTimer()
	var sum float64
	for i := 0; i < b.N; i++ {
		values := 0
		for _, rg := range pf.RowGroups() {
			for _, cc := range rg.ColumnChunks() {
				pages := cc.Pages()
				for {
					pg, err := pages.ReadPage()
					if err == io.EOF {
						break
					}
					if err != nil {
						b.Fatal(err)
					}
					data := pg.Data()
					vals := data.Double()
					values += len(vals)
					for _, v := range vals {
						sum += v
					}
					parquet.Release(pg)
				}
				pages.Close()
			}
		}
		if values != benchRows*16 {
			b.Fatalf("read %d values", values)
		}
	}
	b.ReportMetric(float64(benchRows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
	_ = sum
}

type dictRow struct {
	C0, C1, C2, C3, C4, C5, C6, C7 *float64 `parquet:",optional,dict"`
}

// BenchmarkGuardDictSnappy prices the guard's walk of run-length encoded data (checkColumnChunk
// decompresses every page of a dictionary-encoded or optional column once more to walk its runs):
// "open" opens and closes every unit (footer checks and the walk), "read" also reads every row.
// The file: benchRows × 8 optional, dictionary-encoded float64 columns of 64 distinct values, 1% nulls,
// snappy.
func BenchmarkGuardDictSnappy(b *testing.B) {
	p := filepath.Join(b.TempDir(), "dict.parquet")
	fh, err := os.Create(p)
	if err != nil {
		b.Fatal(err)
	}
	w := parquet.NewGenericWriter[dictRow](fh, parquet.MaxRowsPerRowGroup(128<<10), parquet.Compression(&parquet.Snappy))
	r := rand.New(rand.NewPCG(3, 4))
	rows := make([]dictRow, 8192)
	vals := make([]float64, 8*8192)
	for done := 0; done < benchRows; done += len(rows) {
		for i := range rows {
			f := []**float64{&rows[i].C0, &rows[i].C1, &rows[i].C2, &rows[i].C3, &rows[i].C4, &rows[i].C5, &rows[i].C6, &rows[i].C7}
			for j, c := range f {
				*c = nil
				if r.IntN(100) != 0 {
					vals[i*8+j] = float64(r.IntN(64))
					*c = &vals[i*8+j]
				}
			}
		}
		if _, err := w.Write(rows); err != nil {
			b.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		b.Fatal(err)
	}
	fh.Close()
	ds := openBench(b, p)
	for _, read := range []bool{false, true} {
		name := "open"
		if read {
			name = "read"
		}
		b.Run(name, func(b *testing.B) {
			for b.Loop() {
				for _, u := range ds.Units {
					ur, err := ds.OpenUnit(u)
					if err != nil {
						b.Fatal(err)
					}
					for read {
						if _, err := ur.ReadColumns(4096); err == io.EOF {
							break
						} else if err != nil {
							b.Fatal(err)
						}
					}
					ur.Close()
				}
			}
			b.ReportMetric(float64(benchRows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}
