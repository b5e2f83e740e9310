package synth

import (
	"path/filepath"
	"testing"
)

const benchRows = 1 << 20

func reportRows(b *testing.B, rows int) {
	b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
}

// BenchmarkMixtureGenerate measures generation alone (16 columns, 10 clusters).
func BenchmarkMixtureGenerate(b *testing.B) {
	o := DefaultMixtureOptions()
	o.Rows = benchRows
	g, err := newMixGen(o)
	if err != nil {
		b.Fatal(err)
	}
	chunk := o.rowGroup()
	x := make([]float64, chunk*o.Dims)
	s := newRowSource()
	b.SetBytes(int64(benchRows * o.Dims * 8))
	for b.Loop() {
		for r0 := 0; r0 < o.Rows; r0 += chunk {
			g.fill(r0, min(chunk, o.Rows-r0), x, nil, s)
		}
	}
	reportRows(b, benchRows)
}

func BenchmarkWriteMixture(b *testing.B) {
	for _, tc := range []struct {
		name string
		f    Format
		c    Compression
	}{{"parquet-snappy", Parquet, Snappy}, {"parquet-none", Parquet, None}, {"arrow-file", ArrowFile, Snappy}} {
		b.Run(tc.name, func(b *testing.B) {
			o := DefaultMixtureOptions()
			o.Rows, o.Format, o.Compression = benchRows, tc.f, tc.c
			path := filepath.Join(b.TempDir(), "m."+tc.f.Ext())
			b.SetBytes(int64(benchRows * o.Dims * 8))
			for b.Loop() {
				if err := WriteMixture(path, o); err != nil {
					b.Fatal(err)
				}
			}
			reportRows(b, benchRows)
		})
	}
}

func BenchmarkWriteLoads(b *testing.B) {
	o := DefaultLoadOptions()
	o.Rows = benchRows / 2
	dir := b.TempDir()
	for b.Loop() {
		if _, err := WriteLoads(dir, o); err != nil {
			b.Fatal(err)
		}
	}
	reportRows(b, o.Rows)
}
