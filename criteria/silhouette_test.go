package criteria_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

// naiveSilhouette is the weighted mean silhouette straight from its definition (Rousseeuw 1987,
// "Silhouettes: a graphical aid to the interpretation and validation of cluster analysis"): every
// pair measured, singletons scored 0, zero-weight points left out.
func naiveSilhouette(p kmeans.Data, labels []int32, k int) float64 {
	tot, tw := 0.0, 0.0
	for i := 0; i < p.Len(); i++ {
		wi := p.Weight(i)
		if wi == 0 {
			continue
		}
		sum, wt := make([]float64, k), make([]float64, k)
		for j := 0; j < p.Len(); j++ {
			if j == i || p.Weight(j) == 0 {
				continue
			}
			sum[labels[j]] += p.Weight(j) * math.Sqrt(kmeans.Dist2(p.Point(i), p.Point(j)))
			wt[labels[j]] += p.Weight(j)
		}
		s := 0.0
		if own := labels[i]; wt[own] > 0 {
			a, b := sum[own]/wt[own], math.Inf(1)
			for c := range sum {
				if int32(c) != own && wt[c] > 0 {
					b = math.Min(b, sum[c]/wt[c])
				}
			}
			if m := math.Max(a, b); m > 0 {
				s = (b - a) / m
			}
		}
		tot += wi * s
		tw += wi
	}
	return tot / tw
}

// TestSilhouetteExactMatchesNaive checks the pruned silhouette (clusters skipped by the lower
// bound on their mean distance) against the definition on sets where the bound prunes most
// clusters (well separated), few (overlapping, random labels), in 64 and 160 dimensions, and
// with zero weights, a singleton and an empty cluster.
func TestSilhouetteExactMatchesNaive(t *testing.T) {
	cases := []struct {
		name    string
		p       kmeans.Data
		k       int
		labels  func(p kmeans.Data, k int) []int32
		weights bool
	}{
		{"separated k=15 fitted", mixture(5, 900, 4, 15, 30), 15, fitLabels, false},
		{"separated weighted", mixture(6, 700, 3, 12, 25), 12, fitLabels, true},
		{"overlapping random labels", mixture(7, 500, 5, 3, 0.5), 7, randomLabels, true},
		// Many dimensions: near-equidistant clusters, pruned by the moments' (Hölder) bound.
		{"64 dimensions, 20 fitted to 10", mixture(9, 600, 64, 10, 6), 20, fitLabels, true},
		{"160 dimensions (trace bound), 8 fitted to 4", mixture(10, 300, 160, 4, 8), 8, fitLabels, false},
		{"singleton and empty cluster", mixture(8, 300, 2, 4, 10), 6, func(p kmeans.Data, k int) []int32 {
			l := fitLabels(p, 4)
			l[17] = 5 // a singleton; label 4 stays empty
			return l
		}, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := c.p
			if c.weights {
				rng := rand.New(rand.NewPCG(9, 9))
				p.W = make([]float64, p.Len())
				for i := range p.W {
					p.W[i] = rng.Float64() * 3
					if i%11 == 0 {
						p.W[i] = 0
					}
				}
			}
			labels := c.labels(p, c.k)
			got, want := criteria.SilhouetteExact(p, labels, c.k), naiveSilhouette(p, labels, c.k)
			if math.Abs(got-want) > 1e-12 {
				t.Fatalf("SilhouetteExact %.15f, definition %.15f", got, want)
			}
		})
	}
}

func fitLabels(p kmeans.Data, k int) []int32 {
	return kmeans.Fit(p, k, kmeans.FitOptions{Restarts: 2, Rand: rand.New(rand.NewPCG(3, 3))}).Labels
}

func randomLabels(p kmeans.Data, k int) []int32 {
	rng := rand.New(rand.NewPCG(4, 4))
	l := make([]int32, p.Len())
	for i := range l {
		l[i] = int32(rng.IntN(k))
	}
	return l
}
