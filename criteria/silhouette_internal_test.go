package criteria

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestSilhouetteLowerBound checks silGroups.lowerBound against the weighted mean distance it
// bounds, measured directly, for points inside, near and far from a cluster: never above it, on
// round, elongated and heavy-tailed clusters with unequal weights, in 2 to 160 dimensions (the
// last with the trace in place of the largest eigenvalue), and, for points near a round cluster
// in 64 dimensions, within 3% of it where the centroid's distance alone (Jensen's bound) falls
// more than 10% below.
func TestSilhouetteLowerBound(t *testing.T) {
	for _, d := range []int{2, 8, 64, 160} {
		for _, shape := range []string{"round", "elongated", "heavy"} {
			rng := rand.New(rand.NewPCG(uint64(d), 11))
			const n = 400
			p := Points{D: d, X: make([]float64, n*d), W: make([]float64, n)}
			for i := 0; i < n; i++ {
				p.W[i] = 0.2 + rng.Float64()*3
				for t := 0; t < d; t++ {
					v := rng.NormFloat64()
					switch shape {
					case "elongated":
						if t == 0 {
							v *= 6
						}
					case "heavy": // Student t with 3 degrees of freedom
						c := rng.NormFloat64()*rng.NormFloat64() + rng.NormFloat64()*rng.NormFloat64() + rng.NormFloat64()*rng.NormFloat64()
						v /= math.Sqrt(math.Abs(c)/3 + 1e-3)
					}
					p.X[i*d+t] = 5 + v
				}
			}
			g := newSilGroups(p, make([]int32, n), 1)
			sp := g.spreads()
			worstFar, worstJensen := 1.0, 1.0
			for trial := 0; trial < 60; trial++ {
				x := make([]float64, d)
				dist := []float64{0, 0.5, 3, 20}[trial%4]
				if trial%5 == 0 {
					copy(x, p.Point(trial)) // a point of the cluster
				} else {
					for t := range x {
						x[t] = 5 + rng.NormFloat64() + dist*rng.NormFloat64()
					}
				}
				mean, tw := 0.0, 0.0
				for i := 0; i < n; i++ {
					e := 0.0
					for t, v := range p.Point(i) {
						e += (x[t] - v) * (x[t] - v)
					}
					mean += p.W[i] * math.Sqrt(e)
					tw += p.W[i]
				}
				mean /= tw
				lb := g.lowerBound(x, 0, &sp[0])
				if !(lb <= mean) {
					t.Fatalf("d=%d %s trial %d: bound %.17g above the mean distance %.17g", d, shape, trial, lb, mean)
				}
				if d == 64 && trial%5 != 0 && (dist == 0.5 || dist == 3) {
					r := 0.0
					for t, v := range x {
						r += (v - g.centre[t]) * (v - g.centre[t])
					}
					worstFar = math.Min(worstFar, lb/mean)
					worstJensen = math.Min(worstJensen, math.Sqrt(r)/mean)
				}
			}
			if d == 64 && shape == "round" && (worstFar < 0.97 || worstJensen > 0.9) {
				t.Errorf("d=64 %s, points near the cluster: bound / mean at worst %.4f (want >= 0.97), centroid distance / mean at worst %.4f (want <= 0.9)", shape, worstFar, worstJensen)
			}
			if d == 64 {
				t.Logf("d=64 %s, points near the cluster: bound / mean at worst %.4f, centroid distance / mean at worst %.4f", shape, worstFar, worstJensen)
			}
		}
	}
}
