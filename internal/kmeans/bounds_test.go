package kmeans

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestAssignContract runs Lloyd's steps one at a time and checks every assignment against a
// scan of every centre: each label is a nearest centre (where two are equally near, either),
// the count returned is the number of labels that changed, h.moved lists exactly
// the changed points in order (while they are few enough to be listed), and the bounds hold
// (upper at least the distance to the assigned centre, lower at most the distance to every
// other one). The sets are loose groups with more centres than groups, so most points keep
// their bounds and some fail them in every iteration; one case has points of weight 0.
func TestAssignContract(t *testing.T) {
	for _, tc := range []struct {
		n, d, k int
		zeros   bool
	}{{3000, 2, 9, false}, {2000, 16, 12, true}, {1500, 5, 25, false}} {
		rng := rand.New(rand.NewPCG(uint64(tc.n), uint64(tc.k)))
		x := make([]float64, tc.n*tc.d)
		w := make([]float64, tc.n)
		for i := range tc.n {
			for t := range tc.d {
				x[i*tc.d+t] = 4*float64(i%5) + rng.NormFloat64()
			}
			w[i] = 0.5 + rng.Float64()
			if tc.zeros && i%9 == 0 {
				w[i] = 0
			}
		}
		p := Data{X: x, W: w, D: tc.d}
		c := PlusPlus(p, tc.k, rand.New(rand.NewPCG(2, 3)), nil)
		h := newHamerly(p, tc.k)
		cs := newCentred(p, tc.k, nil)
		labels := make([]int32, tc.n)
		sizes := make([]float64, tc.k)
		old := make([]float64, tc.k*tc.d)
		partial, failed := 0, 0
		for it := 1; it <= 60; it++ {
			before := slices.Clone(labels)
			changed := h.assign(c, labels, it == 1)
			var moved []int32
			for i := range tc.n {
				x := p.Point(i)
				best, bestD := 0, math.Inf(1)
				for j := range tc.k {
					if v := Dist2(x, c[j*tc.d:(j+1)*tc.d]); v < bestD {
						best, bestD = j, v
					}
				}
				if labels[i] != int32(best) {
					// A tie broken the other way by the scan's own sums is not a mistake.
					if v := Dist2(x, c[int(labels[i])*tc.d:(int(labels[i])+1)*tc.d]); v != bestD {
						t.Fatalf("n=%d iteration %d: point %d on centre %d, nearest is %d", tc.n, it, i, labels[i], best)
					}
				}
				for j := range tc.k {
					dj := math.Sqrt(Dist2(x, c[j*tc.d:(j+1)*tc.d]))
					if j == int(labels[i]) && h.upper[i] < dj*(1-1e-12) {
						t.Fatalf("n=%d iteration %d: point %d upper bound %v below its distance %v", tc.n, it, i, h.upper[i], dj)
					}
					if j != int(labels[i]) && h.lower[i] > dj*(1+1e-12) {
						t.Fatalf("n=%d iteration %d: point %d lower bound %v above distance %v to centre %d", tc.n, it, i, h.lower[i], dj, j)
					}
				}
				if it > 1 && labels[i] != before[i] {
					moved = append(moved, int32(i))
				}
			}
			if it == 1 {
				if changed != tc.n {
					t.Fatalf("n=%d: the full assignment reported %d changes, want every point", tc.n, changed)
				}
			} else {
				if changed != len(moved) {
					t.Fatalf("n=%d iteration %d: %d changes reported, %d labels changed", tc.n, it, changed, len(moved))
				}
				if len(moved) <= tc.n/incrementalShare && !slices.Equal(h.moved, moved) {
					t.Fatalf("n=%d iteration %d: moved %v, want %v", tc.n, it, h.moved, moved)
				}
				partial++
				if changed > 0 {
					failed++
				}
			}
			if it > 1 && changed == 0 {
				break
			}
			h.reseed(c, labels, sizes)
			copy(old, c)
			cs.update(p, labels, nil, c, sizes, true)
			h.move(old, c, labels)
		}
		if partial < 3 || failed < 2 {
			t.Fatalf("n=%d: %d bounded assignments, %d with changes: the case does not exercise the bounds", tc.n, partial, failed)
		}
	}
}
