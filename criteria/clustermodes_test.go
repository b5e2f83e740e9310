package criteria

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestClusterModes checks ClusterModes on invented property-test shapes: a partition that leaves
// two separated groups in one cluster is rejected, the partition that separates them is not, and
// single clouds that are skewed, heavy-tailed or stretched have one mode in one cluster.
func TestClusterModes(t *testing.T) {
	const n = 3000
	cloud := func(seed uint64, d int, draw func(r *rand.Rand, i, j int) float64) Points {
		r := rand.New(rand.NewPCG(seed, 7))
		x := make([]float64, 0, n*d)
		for i := range n {
			for j := range d {
				x = append(x, draw(r, i, j))
			}
		}
		return Points{X: x, D: d}
	}
	mean := func(p Points) []float64 {
		m := make([]float64, p.D)
		for i := range p.Len() {
			for j, v := range p.Point(i) {
				m[j] += v / float64(p.Len())
			}
		}
		return m
	}
	twoGroups := cloud(1, 2, func(r *rand.Rand, i, j int) float64 {
		if j == 0 {
			return r.NormFloat64() + 4*float64(2*(i%2)-1)
		}
		return r.NormFloat64()
	})
	for _, tc := range []struct {
		name    string
		pts     Points
		centres []float64
		split   bool
	}{
		{"two groups, one centre", twoGroups, mean(twoGroups), true},
		{"two groups, their two centres", twoGroups, []float64{-4, 0, 4, 0}, false},
		{"log-normal, one centre", (cloud(2, 3, func(r *rand.Rand, _, _ int) float64 { return math.Exp(0.8 * r.NormFloat64()) })), nil, false},
		{"student-t(3), one centre", (cloud(3, 3, func(r *rand.Rand, _, _ int) float64 {
			c := 0.0
			for range 3 {
				z := r.NormFloat64()
				c += z * z
			}
			return r.NormFloat64() / math.Sqrt(c/3)
		})), nil, false},
		{"stretched correlated Gaussian, one centre", (cloud(4, 3, func(r *rand.Rand, _, j int) float64 {
			return []float64{10, 1, 0.3}[j] * r.NormFloat64()
		})), nil, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			centres := tc.centres
			if centres == nil {
				centres = mean(tc.pts)
			}
			k := len(centres) / tc.pts.D
			p, cover, tests := ClusterModes(tc.pts, centres, k, rand.New(rand.NewPCG(9, 9)))
			if cover != 1 {
				t.Errorf("cover %.3f, want 1 (every cluster large enough to test)", cover)
			}
			if tests != 2*k {
				t.Errorf("%d tests, want %d (two halves per cluster)", tests, 2*k)
			}
			if got := p < modeCheckAlpha; got != tc.split {
				t.Errorf("p = %.3g: second mode found %v, want %v", p, got, tc.split)
			}
		})
	}
}

// TestDipTailPValue checks the extrapolated tail: it agrees with the counted p-value where the
// counts are many, falls with the dip, and goes below 1/dipNullRuns beyond the null's largest dip.
func TestDipTailPValue(t *testing.T) {
	const n = 200
	ModeDipPValue(0, n) // fills the cache
	v, _ := dipNull.Load(n)
	null := v.([]float64)
	q95 := null[len(null)*95/100]
	if p, want := dipTailPValue(q95, n), ModeDipPValue(q95, n); math.Abs(p-want) > 0.01 {
		t.Errorf("at the 95%% quantile: tail %.4f, counted %.4f", p, want)
	}
	q99 := null[len(null)*99/100]
	if p := dipTailPValue(q99, n); p < 0.003 || p > 0.03 {
		t.Errorf("at the 99%% quantile: tail p = %.4f, want about 0.01", p)
	}
	last := 1.0
	for _, dip := range []float64{q95, q99, null[len(null)-1], 2 * null[len(null)-1], 4 * null[len(null)-1]} {
		p := dipTailPValue(dip, n)
		if !(p < last) {
			t.Errorf("dip %.4f: p %.3g not below %.3g", dip, p, last)
		}
		last = p
	}
	if last >= 1.0/dipNullRuns {
		t.Errorf("a dip four times the null's largest has p = %.3g, want below 1/%d", last, dipNullRuns)
	}
}
