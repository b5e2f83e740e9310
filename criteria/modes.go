package criteria

import (
	"math"
	"math/rand/v2"
	"slices"
	"sync"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// ModeDip returns a dip statistic of the sorted values x: how far, in the sup norm, the empirical
// distribution function F_n of x is from the nearest unimodal distribution function, in the sense
// of Hartigan & Hartigan (1985), "The dip test of unimodality", Ann. Statist. 13(1):70-84. A
// unimodal distribution function is convex left of its mode and concave right of it; the sup-norm
// distance of a function f from the convex functions is half the largest gap between f and its
// greatest convex minorant, so for a mode at x_m
//
//	L(m) = max_{i<=m} (i/n - GCM_m(x_i)),  GCM_m = lower convex hull of (x_j, (j-1)/n), j <= m
//	R(m) = max_{i>=m} (LCM_m(x_i) - (i-1)/n), LCM_m = upper concave hull of (x_j, j/n), j >= m
//	dip  = min_m max(L(m), R(m)) / 2
//
// L grows and R shrinks with m, so the minimum is found by bisection in O(n log n). This couples
// the two sides only through the mode (Hartigan's modal interval is not modelled), so its values
// are not those of Hartigan's tables; ModeDipPValue calibrates it by simulation instead. x must be
// sorted ascending; fewer than 4 values give 0.
func ModeDip(x []float64) float64 {
	n := len(x)
	if n < 4 {
		return 0
	}
	hx := make([]float64, 0, n)
	hy := make([]float64, 0, n)
	left := func(m int) float64 { return hullGap(x[:m+1], 0, n, hx, hy, false) }
	right := func(m int) float64 { return hullGap(x[m:], m, n, hx, hy, true) }
	lo, hi := 0, n-1
	for lo < hi {
		mid := (lo + hi) / 2
		if left(mid) < right(mid) {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	best := max(left(lo), right(lo))
	if lo > 0 {
		best = min(best, max(left(lo-1), right(lo-1)))
	}
	return best / 2
}

// hullGap returns, for the sorted values v = x[off:off+len(v)] of n, the largest gap between the
// empirical distribution function and its greatest convex minorant (upper false) or least concave
// majorant (upper true) over v. hx and hy are scratch.
func hullGap(v []float64, off, n int, hx, hy []float64, upper bool) float64 {
	fn := float64(n)
	// Hull vertices: the lower hull of the left limits (i-1)/n, or the upper hull of i/n.
	hx, hy = hx[:0], hy[:0]
	for i, xv := range v {
		y := float64(off+i) / fn
		if upper {
			y = float64(off+i+1) / fn
		}
		if len(hx) > 0 && xv == hx[len(hx)-1] {
			if !upper {
				continue // a tie: the lower hull keeps the first (smallest) left limit
			}
			hx, hy = hx[:len(hx)-1], hy[:len(hy)-1]
		}
		for len(hx) >= 2 {
			a, b := len(hx)-2, len(hx)-1
			cross := (hx[b]-hx[a])*(y-hy[a]) - (hy[b]-hy[a])*(xv-hx[a])
			if (!upper && cross <= 0) || (upper && cross >= 0) {
				hx, hy = hx[:b], hy[:b]
				continue
			}
			break
		}
		hx, hy = append(hx, xv), append(hy, y)
	}
	gap := 0.0
	s := 0
	for i, xv := range v {
		for s+1 < len(hx) && hx[s+1] < xv {
			s++
		}
		h := hy[s]
		if s+1 < len(hx) && hx[s+1] > hx[s] {
			h = hy[s] + (hy[s+1]-hy[s])*(xv-hx[s])/(hx[s+1]-hx[s])
		} else if s+1 < len(hx) && xv == hx[s+1] {
			h = hy[s+1]
		}
		var g float64
		if upper {
			g = h - float64(off+i)/fn
		} else {
			g = float64(off+i+1)/fn - h
		}
		gap = max(gap, g)
	}
	return gap
}

// dipNullRuns is the number of uniform samples behind each null distribution of ModeDip.
const dipNullRuns = 2000

// dipNull caches the sorted null distribution of ModeDip per sample size. It starts with the
// sizes of dipNullTable (the one-mode check's halves and ClusterModes' ladder), computed once by
// simulateDipNull and stored in the source, so a run does not repeat 2,000 dips of each size;
// other sizes are simulated on first use.
var dipNull sync.Map // int -> []float64

func init() {
	for n, null := range dipNullTable {
		dipNull.Store(n, null)
	}
}

// ModeDipPValue returns the share of dipNullRuns uniform samples of n values whose ModeDip is at
// least dip, with the usual (1 + count) / (1 + runs) correction. The uniform distribution is the
// least favourable unimodal one for the dip (Hartigan & Hartigan 1985, section 4), so the test is
// conservative for other unimodal shapes. The null samples come from a fixed seed, so the p-value
// is a function of (dip, n) alone; each n's null distribution is computed at most once per process.
func ModeDipPValue(dip float64, n int) float64 {
	v, ok := dipNull.Load(n)
	if !ok {
		v, _ = dipNull.LoadOrStore(n, simulateDipNull(n))
	}
	null := v.([]float64)
	i, _ := slices.BinarySearch(null, dip)
	return float64(1+len(null)-i) / float64(1+len(null))
}

// simulateDipNull returns the sorted ModeDip of dipNullRuns samples of n uniform values, drawn
// from a stream seeded by n alone.
func simulateDipNull(n int) []float64 {
	rng := rand.New(rand.NewPCG(uint64(n), 0x646970))
	null := make([]float64, dipNullRuns)
	u := make([]float64, n)
	for b := range null {
		for i := range u {
			u[i] = rng.Float64()
		}
		slices.Sort(u)
		null[b] = ModeDip(u)
	}
	slices.Sort(null)
	return null
}

// modeCheckAlpha is the level of the one-mode check: a split is real when a Bonferroni-corrected
// test over the checked directions rejects unimodality at this level. 1% keeps false alarms on
// one-cluster data rare (an alarm pages someone) at the cost of some power on small samples
// (common practice for a screening test; the measured effect is in DEVELOPERS.md).
const modeCheckAlpha = 0.01

// ModeCheck is the outcome of the one-mode check of Evaluate.
type ModeCheck struct {
	N      int     `json:"n"`       // points in each half
	Dip    float64 `json:"dip"`     // the largest ModeDip over the checked projections
	PValue float64 `json:"p_value"` // the smallest p-value times the number of projections (Bonferroni), at most 1
	Modes  bool    `json:"several_modes"`
}

// modeCheck splits pts (unweighted) into two seeded halves; on each half it fits 2-means and
// 3-means and projects the other half onto each line through two centres of a fit (four lines),
// then tests each of the eight projections for one mode (ModeDip), Bonferroni-corrected. The lines
// of the 3-means fit find a split that 2-means cuts across (elongated clusters). Fitting the direction on one half and testing on the other keeps the test
// honest: a direction chosen to split the tested points would make any sample look split.
func modeCheck(pts Points, rng *rand.Rand) (ModeCheck, bool) {
	n := pts.Len()
	if n < 40 {
		return ModeCheck{}, false
	}
	perm := rng.Perm(n)
	h := n / 2
	a, b := pointsAt(pts, perm[:h]), pointsAt(pts, perm[h:2*h])
	out := ModeCheck{N: h, PValue: 1}
	tests := 0
	minP := 1.0
	for _, pr := range [][2]Points{{a, b}, {b, a}} {
		for _, k := range []int{2, 3} {
			fit := kmeans.Fit(pr[0], k, kmeans.FitOptions{Restarts: 3, Rand: rng})
			for u := 0; u < k; u++ {
				for v := u + 1; v < k; v++ {
					dip, ok := lineDip(pr[1], fit.Centres, u, v, pr[1].Len())
					if !ok {
						continue
					}
					tests++
					out.Dip = max(out.Dip, dip)
					minP = min(minP, ModeDipPValue(dip, pr[1].Len()))
				}
			}
		}
	}
	if tests == 0 {
		return out, false
	}
	out.PValue = math.Min(1, minP*float64(tests))
	out.Modes = out.PValue < modeCheckAlpha
	return out, true
}

// checkPoints is the number of points (from the uniform sample, or drawn from the coreset by
// weight) behind the one-mode check and the split halves.
const checkPoints = 3000

// pointsAt returns the points of pts at idx, in that order, unweighted.
func pointsAt(pts Points, idx []int) Points {
	x := make([]float64, 0, len(idx)*pts.D)
	for _, i := range idx {
		x = append(x, pts.Point(i)...)
	}
	return Points{X: x, D: pts.D}
}

// lineDip returns ModeDip of the first m points of pts projected on the line through centres u and
// v (row-major, pts.D columns each); ok is false when the two centres coincide.
func lineDip(pts Points, centres []float64, u, v, m int) (dip float64, ok bool) {
	d := pts.D
	dir := make([]float64, d)
	norm := 0.0
	for j := range d {
		dir[j] = centres[u*d+j] - centres[v*d+j]
		norm += dir[j] * dir[j]
	}
	if !(norm > 0) {
		return 0, false
	}
	proj := make([]float64, m)
	for i := range proj {
		for j, x := range pts.Point(i) {
			proj[i] += x * dir[j]
		}
	}
	slices.Sort(proj)
	return ModeDip(proj), true
}
