package kmeans_test

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// naivePlusPlus is greedy weighted k-means++ straight from its description (Arthur &
// Vassilvitskii 2007; 2+floor(ln k) candidates per step, the one lowering the potential most
// kept), measuring every point against every candidate. It draws from rng exactly as PlusPlus
// documents: one draw proportional to w for the first centre, then one per candidate
// proportional to w D^2.
func naivePlusPlus(p kmeans.Data, k int, rng *rand.Rand) []float64 {
	n, d := p.Len(), p.D
	draw := func(f []float64) int {
		tot := 0.0
		for i := 0; i < n; i++ {
			v := p.Weight(i)
			if f != nil {
				v *= f[i]
			}
			tot += v
		}
		u, acc, last := rng.Float64()*tot, 0.0, -1
		for i := 0; i < n; i++ {
			v := p.Weight(i)
			if f != nil {
				v *= f[i]
			}
			if v <= 0 {
				continue
			}
			last = i
			acc += v
			if u < acc {
				return i
			}
		}
		return last
	}
	c := append([]float64(nil), p.Point(draw(nil))...)
	d2 := make([]float64, n)
	for i := range d2 {
		d2[i] = kmeans.Dist2(p.Point(i), c[:d])
	}
	for len(c) < k*d {
		bestPot, bestIdx := math.Inf(1), -1
		var bestD2 []float64
		for t := 0; t < 2+int(math.Log(float64(k))); t++ {
			idx := draw(d2)
			cand := make([]float64, n)
			s := 0.0
			for i := range cand {
				cand[i] = math.Min(d2[i], kmeans.Dist2(p.Point(i), p.Point(idx)))
				s += p.Weight(i) * cand[i]
			}
			if s < bestPot {
				bestPot, bestIdx, bestD2 = s, idx, cand
			}
		}
		c = append(c, p.Point(bestIdx)...)
		d2 = bestD2
	}
	return c
}

// TestPlusPlusMatchesNaive checks that the pruned candidate evaluation (points skipped by the
// triangle inequality) picks the same centres as measuring every point, on separated blobs
// (most points skipped) and on uniform noise (few skipped).
func TestPlusPlusMatchesNaive(t *testing.T) {
	for _, c := range []struct {
		name string
		seed uint64
		n, d int
		k    int
		blob float64
	}{
		{"blobs", 1, 2000, 3, 25, 0.05},
		{"uniform", 2, 1500, 5, 12, 0},
		{"weighted blobs", 3, 1000, 2, 40, 0.02},
	} {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(c.seed, 7))
			x := randPoints(rng, c.n, c.d, 1)
			if c.blob > 0 {
				centres := randPoints(rng, c.k, c.d, 10)
				for i := 0; i < c.n; i++ {
					for t := 0; t < c.d; t++ {
						x[i*c.d+t] = centres[(i%c.k)*c.d+t] + c.blob*x[i*c.d+t]
					}
				}
			}
			p := kmeans.Data{X: x, D: c.d}
			if c.name == "weighted blobs" {
				p.W = make([]float64, c.n)
				for i := range p.W {
					p.W[i] = float64(i%5) * 0.7
				}
			}
			got := kmeans.PlusPlus(p, c.k, rand.New(rand.NewPCG(11, 12)), nil)
			want := naivePlusPlus(p, c.k, rand.New(rand.NewPCG(11, 12)))
			for i := range want {
				if got[i] != want[i] {
					t.Fatalf("centre %d differs: got %v, want %v", i/c.d, got[i/c.d*c.d:(i/c.d+1)*c.d], want[i/c.d*c.d:(i/c.d+1)*c.d])
				}
			}
		})
	}
}
