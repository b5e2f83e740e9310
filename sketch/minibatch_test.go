package sketch

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// TestMoveTowardSameBits checks moveToward against the scalar loop it replaces from
// moveVectorFrom values (ctr[j] += eta·(x[j] − ctr[j]), each value rounded the same way), bit for
// bit: widths around the threshold and odd ones, rates of a first and of a late row, and values
// from subnormal to near overflow.
func TestMoveTowardSameBits(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 5))
	for _, d := range []int{1, 7, moveVectorFrom - 1, moveVectorFrom, moveVectorFrom + 3, 64, 513} {
		for _, scale := range []float64{1e-310, 1e-3, 1, 1e6, 1e300} {
			for _, eta := range []float64{1, 0.5, 1.0 / 3, 1.0 / 12345} {
				t.Run(fmt.Sprintf("d=%d/scale=%g/eta=%g", d, scale, eta), func(t *testing.T) {
					ctr := make([]float64, d)
					x := make([]float64, d)
					for j := range ctr {
						ctr[j] = rng.NormFloat64() * scale
						x[j] = rng.NormFloat64() * scale
					}
					want := append([]float64(nil), ctr...)
					for j := range want {
						want[j] += eta * (x[j] - want[j])
					}
					moveToward(ctr, x, eta, make([]float64, d))
					for j := range want {
						if math.Float64bits(ctr[j]) != math.Float64bits(want[j]) {
							t.Fatalf("value %d = %v, want %v bit for bit", j, ctr[j], want[j])
						}
					}
				})
			}
		}
	}
}
