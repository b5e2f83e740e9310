package lanes

import (
	"math"
	"math/rand/v2"
	"testing"
)

// fill sets v to normal values times scale.
func fill(rng *rand.Rand, v []float64, scale float64) {
	for i := range v {
		v[i] = rng.NormFloat64() * scale
	}
}

// scales run each check from subnormal to overflowing magnitudes.
var scales = []float64{1, 1e-3, 1e6, 1e-310, 1e154, 1e200}

// TestSquaredDistsMatchesScalar checks SquaredDists (assembly where the machine has it) against
// the scalar loop it replaces, each vector's squared differences added over t one after another
// on the row-major vectors, bit for bit, and that it writes nothing past the groups asked for.
func TestSquaredDistsMatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 3))
	for _, d := range []int{1, 3, 4, 9, 16, 31, 64, 128} {
		for _, groups := range []int{1, 2, 3, 4, 5, 8, 9, 25} {
			for _, sc := range scales {
				x := make([]float64, d)
				c := make([]float64, 4*groups*d)
				fill(rng, x, sc)
				fill(rng, c, sc)
				got := make([]float64, 4*groups+1)
				got[4*groups] = -7
				SquaredDists(x, Group(nil, c, groups, d), groups, got)
				for j := 0; j < 4*groups; j++ {
					want := 0.0
					for tt, v := range x {
						e := v - c[j*d+tt]
						want += e * e
					}
					if math.Float64bits(want) != math.Float64bits(got[j]) {
						t.Fatalf("d=%d groups=%d scale %g: out[%d] = %v, want %v", d, groups, sc, j, got[j], want)
					}
				}
				if got[4*groups] != -7 {
					t.Fatalf("d=%d groups=%d: wrote past the last group", d, groups)
				}
			}
		}
	}
}

// TestWeightedRootSumsMatchesScalar checks WeightedRootSums against the scalar loop it replaces
// (each row's four squared distances, then w·√ added to each total in row order), bit for bit,
// for odd and even row counts, zero weights and rows equal to an anchor.
func TestWeightedRootSumsMatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 1))
	for _, d := range []int{1, 2, 5, 16, 33, 64} {
		for _, rows := range []int{0, 1, 2, 3, 7, 64, 101} {
			for _, sc := range scales {
				a := make([]float64, 4*d)
				x := make([]float64, rows*d)
				w := make([]float64, rows)
				fill(rng, a, sc)
				fill(rng, x, sc)
				for r := range w {
					w[r] = rng.Float64() * 3
				}
				if rows > 2 {
					w[1] = 0
					copy(x[2*d:3*d], a[:d]) // the first anchor itself
				}
				var want [4]float64
				for l := 0; l < 4; l++ {
					for r := 0; r < rows; r++ {
						s := 0.0
						for tt := 0; tt < d; tt++ {
							e := a[l*d+tt] - x[r*d+tt]
							s += e * e
						}
						want[l] += w[r] * math.Sqrt(s)
					}
				}
				var got [4]float64
				WeightedRootSums(Group(nil, a, 1, d), x, w, &got)
				for l := range want {
					if math.Float64bits(want[l]) != math.Float64bits(got[l]) {
						t.Fatalf("d=%d rows=%d scale %g: lane %d = %v, want %v", d, rows, sc, l, got[l], want[l])
					}
				}
			}
		}
	}
}

// TestShortBuffers checks that the kernels refuse buffers too short for what is asked.
func TestShortBuffers(t *testing.T) {
	for name, f := range map[string]func(){
		"SquaredDists ct":  func() { SquaredDists(make([]float64, 4), make([]float64, 15), 1, make([]float64, 4)) },
		"SquaredDists out": func() { SquaredDists(make([]float64, 4), make([]float64, 16), 1, make([]float64, 3)) },
		"WeightedRootSums x": func() {
			var o [4]float64
			WeightedRootSums(make([]float64, 8), make([]float64, 3), make([]float64, 2), &o)
		},
		"WeightedRootSums a4": func() {
			var o [4]float64
			WeightedRootSums(make([]float64, 7), make([]float64, 8), make([]float64, 1), &o)
		},
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", name)
				}
			}()
			f()
		}()
	}
}
