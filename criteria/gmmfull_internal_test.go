package criteria

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// TestMStepHeldSameBits checks the M step's lists of held points: heldPoints lists, for each
// component, exactly the points whose responsibility is not zero, in index order, and mStep over
// those lists gives the sums of a scan of every point bit for bit (the scan it replaced). On
// Fränti's S1 (2 dimensions, 15 clusters) and DIM032 (32 dimensions, 16 clusters; see
// testdata/refsets/README.md), weighted, with some weights zero, at the published k and above it.
func TestMStepHeldSameBits(t *testing.T) {
	for _, c := range []struct {
		file string
		ks   []int
	}{{"s1.txt", []int{15, 24}}, {"dim032.txt", []int{16, 20}}} {
		p := readSet(t, c.file)
		n, d := p.Len(), p.D
		rng := rand.New(rand.NewPCG(3, 4))
		p.W = make([]float64, n)
		for i := range p.W {
			p.W[i] = 1 + 9*rng.Float64()
			if i%97 == 0 {
				p.W[i] = 0
			}
		}
		for _, k := range c.ks {
			fit := kmeans.Fit(p, k, kmeans.FitOptions{Restarts: 1, Rand: rand.New(rand.NewPCG(1, uint64(k)))})
			g := gmmFullFromFit(p, fit, 1e-6)
			comps, err := g.prepare(1e-6)
			if err != nil {
				t.Fatal(err)
			}
			resp := make([]float64, n*k)
			g.logLik(p, comps, resp)
			var h heldPoints
			every := make([]float64, n*k) // a first list of every point, whose buffers the second reuses
			for i := range every {
				every[i] = 1
			}
			h.list(every, n, k)
			h.list(resp, n, k)
			all := make([]int32, n)
			for i := range all {
				all[i] = int32(i)
			}
			listed := 0
			for j := 0; j < k; j++ {
				var want []int32
				for i := 0; i < n; i++ {
					if resp[i*k+j] != 0 {
						want = append(want, int32(i))
					}
				}
				if !slices.Equal(h.of(j), want) {
					t.Fatalf("%s k=%d component %d: held %d points, want the %d with r != 0 in order", c.file, k, j, len(h.of(j)), len(want))
				}
				listed += len(want)
				blk, blkAll := newMBlock(d), newMBlock(d)
				m0 := g.Means[j*d : j*d+d]
				var nk, nkAll float64
				s, sAll := make([]float64, d), make([]float64, d)
				q, qAll := make([]float64, d*d), make([]float64, d*d)
				mStep(p, resp, h.of(j), j, k, m0, &nk, s, q, &blk)
				mStep(p, resp, all, j, k, m0, &nkAll, sAll, qAll, &blkAll)
				if math.Float64bits(nk) != math.Float64bits(nkAll) || !sameBits(s, sAll) || !sameBits(q, qAll) {
					t.Fatalf("%s k=%d component %d: the held points' M step differs from the scan of every point", c.file, k, j)
				}
			}
			if listed >= n*k {
				t.Errorf("%s k=%d: every responsibility is listed (%d), none pruned", c.file, k, listed)
			}
		}
	}
}

func sameBits(a, b []float64) bool {
	return slices.EqualFunc(a, b, func(x, y float64) bool { return math.Float64bits(x) == math.Float64bits(y) })
}
