package criteria_test

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

// mixture draws n points in d dims from k spherical unit Gaussians with centres uniform in
// [-sep, sep]^d (invented data for benchmarks and property tests only).
func mixture(seed uint64, n, d, k int, sep float64) kmeans.Data {
	rng := rand.New(rand.NewPCG(seed, 99))
	c := make([]float64, k*d)
	for i := range c {
		c[i] = sep * (2*rng.Float64() - 1)
	}
	x := make([]float64, n*d)
	for i := 0; i < n; i++ {
		j := i % k
		for t := 0; t < d; t++ {
			x[i*d+t] = c[j*d+t] + rng.NormFloat64()
		}
	}
	return kmeans.Data{X: x, D: d}
}

// BenchmarkEvaluate times Evaluate for k = 1..20 on a 10,000-point, 16-dimensional exact summary
// with the default options.
func BenchmarkEvaluate(b *testing.B) {
	s := criteria.ExactSummary(mixture(1, 10000, 16, 8, 6))
	opt := criteria.DefaultOptions()
	b.ReportAllocs()
	for b.Loop() {
		if _, err := criteria.Evaluate(context.Background(), s, opt); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSilhouetteAnchors times the anchor estimate with the default 1000 anchors on a
// coreset-sized weighted set (16,384 points, 16 dimensions, 12 clusters fitted to 10).
func BenchmarkSilhouetteAnchors(b *testing.B) {
	p := mixture(3, 16384, 16, 10, 4)
	p.W = make([]float64, p.Len())
	for i := range p.W {
		p.W[i] = 1 + float64(i%7)
	}
	fit := kmeans.Fit(p, 12, kmeans.FitOptions{Restarts: 1})
	for b.Loop() {
		criteria.SilhouetteAnchors(p, fit.Labels, 12, 1000, rand.New(rand.NewPCG(1, 2)))
	}
}

// BenchmarkGMMFit times one mixture fit at k = 20 on a 16,384-point coreset (the default
// coreset size) of 8 clusters in d = 24, 48 and 64 dimensions, started from the k-means fit as in
// Evaluate: the diagonal model (GMMFit) beside the full-covariance one (GMMFullFit).
func BenchmarkGMMFit(b *testing.B) {
	for _, d := range []int{24, 48, 64} {
		p := mixture(2, 16384, d, 8, 6)
		fit := kmeans.Fit(p, 20, kmeans.FitOptions{Restarts: 1, Rand: rand.New(rand.NewPCG(1, 1))})
		b.Run(fmt.Sprintf("diag/d=%d", d), func(b *testing.B) {
			it := 0
			for b.Loop() {
				_, _, it = criteria.GMMFit(p, fit, criteria.GMMOptions{Reg: 1e-6})
			}
			b.ReportMetric(float64(it), "em-iters")
		})
		b.Run(fmt.Sprintf("full/d=%d", d), func(b *testing.B) {
			it := 0
			for b.Loop() {
				var err error
				if _, _, it, err = criteria.GMMFullFit(p, fit, criteria.GMMOptions{Reg: 1e-6, MaxIter: 100, Tol: 1e-3}); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(it), "em-iters")
		})
	}
}

// BenchmarkStudentTFit is the one Student t Evaluate fits at k = 1 (20 iterations at most,
// tolerance 1e-3 per unit weight, as the mixtures), on 16,384 points at the widths of
// BenchmarkCriteriaStage.
func BenchmarkStudentTFit(b *testing.B) {
	for _, d := range []int{16, 40, 64} {
		p := mixture(2, 16384, d, 8, 6)
		b.Run(fmt.Sprintf("d=%d", d), func(b *testing.B) {
			it := 0
			for b.Loop() {
				var err error
				if _, _, it, err = criteria.StudentTFit(p, criteria.GMMOptions{Reg: 1e-6, MaxIter: 20, Tol: 1e-3}); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(it), "em-iters")
		})
	}
}
