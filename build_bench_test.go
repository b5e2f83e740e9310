package kgauge

import (
	"context"
	"path/filepath"
	"testing"

	"github.com/kgauge/kgauge/bench/synth"
)

// BenchmarkBuild measures the probe and the pass (read + sketch) on a 16-column mixture, per row.
func BenchmarkBuild(b *testing.B) {
	for _, workers := range []int{1, 2} {
		b.Run(map[int]string{1: "workers=1", 2: "workers=2"}[workers], func(b *testing.B) {
			path := filepath.Join(b.TempDir(), "mix.parquet")
			o := synth.DefaultMixtureOptions()
			o.Rows, o.RowGroup, o.Compression = 2_000_000, 1<<18, synth.None
			if err := synth.WriteMixture(path, o); err != nil {
				b.Fatal(err)
			}
			opt := DefaultOptions()
			opt.Workers = workers
			b.SetBytes(int64(o.Rows * o.Dims * 8))
			b.ReportAllocs()
			for b.Loop() {
				sk, _, _, err := Build(context.Background(), []string{path}, opt)
				if err != nil {
					b.Fatal(err)
				}
				if sk.Rows() != int64(o.Rows) {
					b.Fatalf("rows %d", sk.Rows())
				}
			}
			b.ReportMetric(float64(o.Rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}
