package sketch

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// BenchmarkCrossAdd measures the covariance's cross-products per row at 16, 64 and 512 columns,
// given a mini-batch buffer's 1024 rows at a time, as far apart as the sketch holds them: at 512
// the upper triangle is 1 MiB of sums, more than a core's cache.
func BenchmarkCrossAdd(b *testing.B) {
	for _, d := range []int{16, 64, 512} {
		b.Run(fmt.Sprintf("d=%d", d), func(b *testing.B) {
			rng := rand.New(rand.NewPCG(2, 3))
			const rows = 1024
			ld := crossStride(d) // as the sketch holds them
			x := make([]float64, rows*ld)
			for i := range x {
				x[i] = rng.NormFloat64()
			}
			c := newCross(make([]float64, d), ones(d))
			for b.Loop() {
				c.add(x, ld, rows)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*rows), "ns/row")
		})
	}
}

func ones(d int) []float64 {
	u := make([]float64, d)
	for j := range u {
		u[j] = 1
	}
	return u
}
