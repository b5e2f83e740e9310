package kgauge

import (
	"context"
	"fmt"
	"path/filepath"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat"

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

// BenchmarkProbeShare reports the probe's time against the pass's (issue 15, item 2: at most 10%
// on files of 1M rows or more) as medians over repeated builds in one process, so that both
// stages run on memory the process has already touched. A fresh process pays the host's cost of
// touching new memory (about 3 µs per 4 KiB page on the shared VMs here, 50 ms per 16 MiB) on
// whichever stage reads first; moving it between the stages leaves their sum unchanged
// (DEVELOPERS.md, issue 15, "The probe's share").
func BenchmarkProbeShare(b *testing.B) {
	for _, rows := range []int{1 << 20, 4 << 20} {
		b.Run(fmt.Sprintf("rows=%d", rows), func(b *testing.B) {
			path := filepath.Join(b.TempDir(), "mix.parquet")
			o := synth.DefaultMixtureOptions()
			o.Rows, o.RowGroup, o.Compression = rows, 1<<20, synth.None
			if err := synth.WriteMixture(path, o); err != nil {
				b.Fatal(err)
			}
			opt := DefaultOptions()
			opt.Workers = 2
			var probe, pass []float64
			for b.Loop() {
				_, _, tm, err := Build(context.Background(), []string{path}, opt)
				if err != nil {
					b.Fatal(err)
				}
				probe, pass = append(probe, tm.Probe), append(pass, tm.Pass)
			}
			median := func(x []float64) float64 {
				x = slices.Clone(x)
				slices.Sort(x)
				return stat.Quantile(0.5, stat.Empirical, x, nil)
			}
			b.ReportMetric(1000*median(probe), "probe-ms")
			b.ReportMetric(1000*median(pass), "pass-ms")
			b.ReportMetric(100*median(probe)/median(pass), "probe/pass-%")
		})
	}
}
