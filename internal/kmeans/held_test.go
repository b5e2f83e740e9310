package kmeans

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestHeldFollowsLabels runs Lloyd's steps on sets where clusters empty and are re-seeded in
// later iterations (more centres than groups, some points of weight 0) and checks after every
// assignment and re-seeding that hamerly.held, kept incrementally, equals a count of the
// points of positive weight under the labels; that some re-seeding happened after the first
// iteration; and that reseed still re-seeds whenever a cluster holds no weight.
func TestHeldFollowsLabels(t *testing.T) {
	late := 0
	for seed := uint64(1); seed <= 40; seed++ {
		rng := rand.New(rand.NewPCG(seed, 11))
		n, d, k := 60, 2, 12
		x := make([]float64, n*d)
		w := make([]float64, n)
		for i := range n {
			g := float64(i % 3)
			x[i*d], x[i*d+1] = 10*g+rng.NormFloat64(), rng.NormFloat64()
			w[i] = 1 + rng.Float64()
			if i%7 == 0 {
				w[i] = 0
			}
		}
		p := Data{X: x, W: w, D: d}
		c := make([]float64, k*d) // centres anywhere in the box: some start or end up empty
		for j := range k {
			c[j*d], c[j*d+1] = -5+30*rng.Float64(), -3+6*rng.Float64()
		}
		h := newHamerly(p, k)
		labels := make([]int32, n)
		sizes := make([]float64, k)
		cs := newCentred(p, k, nil)
		old := make([]float64, k*d)
		for it := 1; it <= 50; it++ {
			changed := h.assign(c, labels, it == 1)
			checkHeld(t, h, p, labels, "assign")
			if it > 1 && changed == 0 {
				break
			}
			reseeded := h.reseed(c, labels, sizes)
			checkHeld(t, h, p, labels, "reseed")
			for j := range k {
				if weightOf(p, labels, j) == 0 {
					t.Fatalf("seed %d iteration %d: cluster %d holds no weight after reseed", seed, it, j)
				}
			}
			if reseeded && it > 1 {
				late++
			}
			copy(old, c)
			cs.update(p, labels, nil, c, sizes, true)
			h.move(old, c, labels)
		}
	}
	if late == 0 {
		t.Fatal("no cluster emptied after the first iteration: the cases do not reach the incremental counts")
	}
}

func checkHeld(t *testing.T, h *hamerly, p Data, labels []int32, after string) {
	t.Helper()
	want := make([]int, h.k)
	for i, l := range labels {
		if p.Weight(i) > 0 {
			want[l]++
		}
	}
	if !slices.Equal(h.held, want) {
		t.Fatalf("after %s: held %v, labels give %v", after, h.held, want)
	}
}

func weightOf(p Data, labels []int32, j int) float64 {
	s := 0.0
	for i, l := range labels {
		if int(l) == j {
			s += p.Weight(i)
		}
	}
	return s
}
