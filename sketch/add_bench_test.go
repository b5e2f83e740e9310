package sketch

import (
	"math/rand/v2"
	"testing"
)

// steadySketch returns a 16-column sketch in steady state (reservoirs full, the mini-batch feed at
// the rate of a 100M-row input) and the rows it was filled with.
func steadySketch(b *testing.B) (*Sketch, []float64, int) {
	rng := rand.New(rand.NewPCG(1, 1))
	d := 16
	x, _ := blobs(rng, 1<<16, d, []float64{1, 1, 1, 1}, 4)
	cfg := Config{Columns: columns(d), MaxK: 20, ExpectedRows: 100_000_000}
	s, err := New(cfg, probeOf(b, x, d, 20))
	if err != nil {
		b.Fatal(err)
	}
	for range 40 {
		s.Add(x)
	}
	return s, x, d
}

// BenchmarkAdd measures Sketch.Add per row on 16 columns in 4096-row batches, in steady state.
func BenchmarkAdd(b *testing.B) {
	s, x, d := steadySketch(b)
	batch := x[:4096*d]
	b.SetBytes(int64(len(batch) * 8))
	b.ReportAllocs()
	for b.Loop() {
		s.Add(batch)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*4096), "ns/row")
}

// BenchmarkAddColumns is BenchmarkAdd with the rows given by column, as the pass gives them.
func BenchmarkAddColumns(b *testing.B) {
	s, x, d := steadySketch(b)
	const rows = 4096
	cols := byColumn(x[:rows*d], d)
	b.SetBytes(rows * int64(d) * 8)
	b.ReportAllocs()
	for b.Loop() {
		s.AddColumns(cols)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*rows), "ns/row")
}
