package kmeans

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestGroupedNearest2MatchesScalar checks the grouped scan (lanes' assembly where the machine has it)
// against nearest2's scalar loop bit for bit: the same nearest centre and the same two squared
// distances, over widths that are and are not multiples of four, k with and without a partial
// group, and values from subnormal to overflowing magnitudes.
func TestGroupedNearest2MatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 9))
	scales := []float64{1, 1e-3, 1e6, 1e-310, 1e154, 1e200}
	var g grouped
	for _, d := range []int{1, 2, 3, 4, 5, 7, 8, 15, 16, 17, 33, 64} {
		for _, k := range []int{4, 5, 7, 8, 12, 13, 16, 20, 21, 40, 101} {
			for _, sc := range scales {
				c := make([]float64, k*d)
				for i := range c {
					c[i] = rng.NormFloat64() * sc
				}
				if k > 5 {
					copy(c[5*d:6*d], c[2*d:3*d]) // a tie between two centres
				}
				g.load(c, k, d)
				x := make([]float64, d)
				for trial := 0; trial < 20; trial++ {
					for i := range x {
						x[i] = rng.NormFloat64() * sc
					}
					if trial == 0 {
						copy(x, c[2*d:3*d]) // on a centre (and its twin)
					}
					b0, a0, s0 := nearest2(x, c, k, d)
					b1, a1, s1 := g.nearest2(x, c, k, d)
					if b0 != b1 || math.Float64bits(a0) != math.Float64bits(a1) || math.Float64bits(s0) != math.Float64bits(s1) {
						t.Fatalf("d=%d k=%d scale %g: grouped (%d, %v, %v), scalar (%d, %v, %v)", d, k, sc, b1, a1, s1, b0, a0, s0)
					}
				}
			}
		}
	}
}
