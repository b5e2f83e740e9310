package criteria

import (
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/mat"

	"github.com/kgauge/kgauge/internal/kmeans"
	"github.com/kgauge/kgauge/internal/lanes"
)

// silGroups holds the positive-weight points of p reordered by cluster (stable, so each cluster
// keeps index order), for computing silhouettes of many points at once.
type silGroups struct {
	d      int
	x      []float64 // points, row-major, cluster 0's first
	w      []float64 // their weights
	start  []int     // cluster c is rows start[c]:start[c+1]
	total  []float64 // total weight per cluster
	row    []int     // row of point i of p (-1 for zero weight)
	centre []float64 // weighted mean per cluster, k*d
}

func newSilGroups(p Points, labels []int32, k int) *silGroups {
	n, d := p.Len(), p.D
	g := &silGroups{d: d, start: make([]int, k+1), total: make([]float64, k)}
	for i := 0; i < n; i++ {
		if p.Weight(i) > 0 {
			g.start[labels[i]+1]++
		}
	}
	for c := 0; c < k; c++ {
		g.start[c+1] += g.start[c]
	}
	m := g.start[k]
	g.x, g.w, g.row = make([]float64, m*d), make([]float64, m), make([]int, n)
	next := append([]int(nil), g.start[:k]...)
	for i := 0; i < n; i++ {
		w := p.Weight(i)
		g.row[i] = -1
		if !(w > 0) {
			continue
		}
		l := labels[i]
		r := next[l]
		next[l]++
		g.row[i] = r
		copy(g.x[r*d:(r+1)*d], p.Point(i))
		g.w[r] = w
		g.total[l] += w
	}
	g.centre = make([]float64, k*d)
	for c := 0; c < k; c++ {
		m := g.centre[c*d : (c+1)*d]
		for r := g.start[c]; r < g.start[c+1]; r++ {
			for t, v := range g.x[r*d : (r+1)*d] {
				m[t] += g.w[r] * v
			}
		}
		if g.total[c] > 0 {
			for t := range m {
				m[t] /= g.total[c]
			}
		}
	}
	return g
}

// silSpread is what silGroups.lowerBound needs of one cluster's points X (weights w / their
// total) about their weighted mean c: t = E||X - c||^2, m4 = E||X - c||^4,
// m3 = E[(X - c) ||X - c||^2] and lmax, at least the largest eigenvalue of their covariance.
type silSpread struct {
	t, m4, lmax float64
	m3          []float64
}

// silCovMaxD is the most dimensions at which silSpread's lmax is the largest eigenvalue of the
// cluster's covariance (gonum mat.EigenSym; n d^2 / 2 to accumulate, d^3 to factor); above it,
// lmax is t, the covariance's trace: always at least as large, and free, but a weaker bound.
const silCovMaxD = 128

// spreads returns every cluster's silSpread.
func (g *silGroups) spreads() []silSpread {
	d, k := g.d, len(g.total)
	out := make([]silSpread, k)
	e := make([]float64, d)
	var cov []float64
	if d <= silCovMaxD {
		cov = make([]float64, d*d)
	}
	blk := newMBlock(d)
	for c := 0; c < k; c++ {
		nb := 0
		s := &out[c]
		s.m3 = make([]float64, d)
		if !(g.total[c] > 0) {
			continue
		}
		clear(cov)
		m := g.centre[c*d : (c+1)*d]
		for r := g.start[c]; r < g.start[c+1]; r++ {
			w, v := g.w[r], 0.0
			for t, x := range g.x[r*d : (r+1)*d] {
				e[t] = x - m[t]
				v += e[t] * e[t]
			}
			s.t += w * v
			s.m4 += w * v * v
			for t, et := range e {
				s.m3[t] += w * v * et
			}
			if cov != nil {
				copy(blk.e[nb][:d], e)
				blk.w[nb] = w
				if nb++; nb == 4 {
					outer4(cov, d, &blk)
					nb = 0
				}
			}
		}
		if cov != nil {
			outerFirst(cov, d, &blk, nb)
		}
		inv := 1 / g.total[c]
		s.t *= inv
		s.m4 *= inv
		for t := range s.m3 {
			s.m3[t] *= inv
		}
		s.lmax = s.t
		if cov == nil {
			continue
		}
		sym := mat.NewSymDense(d, nil)
		for a := 0; a < d; a++ {
			for b := a; b < d; b++ {
				sym.SetSym(a, b, cov[a*d+b]*inv)
			}
		}
		var es mat.EigenSym
		if es.Factorize(sym, false) {
			if top := es.Values(nil)[d-1] * (1 + 1e-9); top < s.lmax {
				s.lmax = top
			}
		}
	}
	return out
}

// lowerBound returns a lower bound on the weighted mean distance E||x - X|| from x to the points
// X of cluster c (sp its silSpread): the larger of ||x - c|| (the norm is convex: Jensen's
// inequality) and E[Y^2]^(3/2) / E[Y^4]^(1/2) with Y = ||x - X|| (Hölder's inequality,
// E[Y^2] = E[Y^(2/3) Y^(4/3)] <= E[Y]^(2/3) E[Y^4]^(1/3)), where, with r^2 = ||x - c||^2,
//
//	E[Y^2] = r^2 + t,  E[Y^4] <= r^4 + 4 lmax r^2 + m4 + 2 r^2 t - 4 (x - c)·m3
//
// (expanding Y^2 = r^2 - 2 (x - c)·(X - c) + ||X - c||^2; the only term bounded is
// E[((x - c)·(X - c))^2] <= lmax r^2). In many dimensions Y is concentrated and the second bound
// is within about a percent of E||x - X||, where Jensen's is far below. Shrunk by a relative
// 1e-6, so rounding can never make it exceed the mean it bounds.
func (g *silGroups) lowerBound(x []float64, c int, sp *silSpread) float64 {
	m := g.centre[c*g.d : (c+1)*g.d]
	r2, dot := 0.0, 0.0
	for t, v := range x {
		e := v - m[t]
		r2 += e * e
		dot += e * sp.m3[t]
	}
	lb := math.Sqrt(r2)
	ey2 := r2 + sp.t
	if ey4 := r2*r2 + 4*sp.lmax*r2 + sp.m4 + 2*r2*sp.t - 4*dot; ey4 > 0 {
		if h := ey2 * math.Sqrt(ey2) / math.Sqrt(ey4); h > lb { // false for NaN (overflow)
			lb = h
		}
	}
	return lb * (1 - 1e-6)
}

// silBlock is the number of anchors silGroups.silhouettes measures per sweep over a cluster.
const silBlock = 4 // one group of lanes.WeightedRootSums

// silhouettes writes s(i) of each anchor (point i of p with label labels[i] and weight > 0) into
// out (Rousseeuw 1987):
//
//	a(i) = sum_{j in C(i), j != i} w_j ||x_i - x_j|| / sum_{j in C(i), j != i} w_j
//	b(i) = min over non-empty clusters C != C(i) of sum_{j in C} w_j ||x_i - x_j|| / sum_{j in C} w_j
//	s(i) = (b(i) - a(i)) / max(a(i), b(i))
//
// Singleton convention (Rousseeuw 1987): when no other point with positive weight shares the
// cluster of i, s(i) = 0; s(i) = 0 also when a(i) = b(i) = 0; NaN when only one cluster is
// non-empty.
//
// Only the clusters that can hold b(i) are measured. The weighted mean distance from x_i to the
// points of C has a lower bound from C's moments (silGroups.lowerBound), so once some cluster's
// mean distance is known, every cluster whose bound lies above it is skipped; clusters are
// visited by increasing bound. The result is that of measuring every cluster (the sums are
// formed in the same order). Anchors
// are taken silBlock at a time, each point of a measured cluster loaded once per block; an
// anchor's distance to itself is 0 and adds nothing to its cluster's sum.
func (g *silGroups) silhouettes(p Points, labels []int32, anchors []int, out []float64) {
	d, k := g.d, len(g.total)
	sums := make([]float64, silBlock*k)
	lb := make([]float64, silBlock*k)
	best := make([]float64, silBlock)
	order := make([]int, 0, k)
	key := make([]float64, k)
	var ax [silBlock][]float64
	var own [silBlock]int32
	block := make([]float64, silBlock*d) // the block's anchors, row-major
	var at []float64                     // and transposed for meanDist
	spread := g.spreads()
	for b := 0; b < len(anchors); b += silBlock {
		nb := min(silBlock, len(anchors)-b)
		for q := 0; q < silBlock; q++ {
			i := anchors[b+min(q, nb-1)] // a short block repeats its last anchor
			ax[q], own[q] = p.Point(i), labels[i]
			best[q] = math.Inf(1)
			copy(block[q*d:(q+1)*d], ax[q])
		}
		at = lanes.Group(at, block, 1, d)
		order = order[:0]
		for c := 0; c < k; c++ {
			key[c] = math.Inf(1)
			if g.start[c+1] == g.start[c] {
				continue
			}
			for q := 0; q < silBlock; q++ {
				v := g.lowerBound(ax[q], c, &spread[c])
				if int32(c) == own[q] {
					v = math.Inf(-1) // its own cluster is always measured (for a(i))
				}
				lb[q*k+c] = v
				key[c] = min(key[c], v)
			}
			order = append(order, c)
		}
		sort.Slice(order, func(x, y int) bool { return key[order[x]] < key[order[y]] })
		for _, c := range order {
			need := false
			for q := 0; q < nb; q++ {
				if lb[q*k+c] < best[q] {
					need = true
				}
			}
			if !need {
				continue
			}
			t := g.meanDist(at, c)
			for q := 0; q < silBlock; q++ {
				sums[q*k+c] = t[q]
				if int32(c) != own[q] {
					best[q] = min(best[q], t[q]/g.total[c])
				}
			}
		}
		for q := 0; q < nb; q++ {
			i := anchors[b+q]
			out[b+q] = g.finish(sums[q*k:(q+1)*k], own[q], g.row[i], best[q])
		}
	}
}

// meanDist returns, for each of the silBlock anchors (transposed in at, lanes.Group),
// sum_{j in C} w_j ||x_i - x_j||, the points' terms added in row order.
func (g *silGroups) meanDist(at []float64, c int) [silBlock]float64 {
	var t [silBlock]float64
	d := g.d
	lo, hi := g.start[c], g.start[c+1]
	lanes.WeightedRootSums(at, g.x[lo*d:hi*d], g.w[lo:hi], &t)
	return t
}

// finish returns s(i) from the anchor's weighted distance sum to its own cluster and b(i); row is
// the anchor's row. The weight of the rest of its cluster is summed in index order, as the
// definition reads.
func (g *silGroups) finish(sum []float64, own int32, row int, b float64) float64 {
	if g.start[own+1]-g.start[own] <= 1 {
		return 0 // singleton
	}
	rest := 0.0
	for r := g.start[own]; r < g.start[own+1]; r++ {
		if r != row {
			rest += g.w[r]
		}
	}
	a := sum[own] / rest
	if math.IsInf(b, 1) {
		return math.NaN() // only one non-empty cluster
	}
	m := math.Max(a, b)
	if m == 0 {
		return 0
	}
	return (b - a) / m
}

// SilhouetteExact returns the weighted mean silhouette sum_i w_i s(i) / sum_i w_i over every point
// of p (Rousseeuw 1987, "Silhouettes: a graphical aid to the interpretation and validation of
// cluster analysis", J. Comput. Appl. Math. 20:53-65), with s(i) as documented on
// SilhouetteAnchors. With unit weights it is the usual mean silhouette (O(n^2 d)). labels must be in
// 0..k-1. It returns NaN when fewer than 2 clusters are non-empty. It panics if len(labels) != p.Len().
func SilhouetteExact(p Points, labels []int32, k int) float64 {
	if len(labels) != p.Len() {
		panic("criteria: SilhouetteExact: len(labels) != number of points")
	}
	g := newSilGroups(p, labels, k)
	var anchors []int
	for i := 0; i < p.Len(); i++ {
		if p.Weight(i) > 0 {
			anchors = append(anchors, i)
		}
	}
	sil := make([]float64, len(anchors))
	g.silhouettes(p, labels, anchors, sil)
	tot, tw := 0.0, 0.0
	for a, i := range anchors {
		w := p.Weight(i)
		s := sil[a]
		if math.IsNaN(s) {
			return math.NaN()
		}
		tot += w * s
		tw += w
	}
	if tw == 0 {
		return math.NaN()
	}
	return tot / tw
}

// SilhouetteEstimate is a mean-silhouette estimate with its 95% confidence interval.
type SilhouetteEstimate struct {
	Mean, Lo, Hi float64 // estimate and normal-approximation 95% interval (Mean ± 1.96 SE)
	SE           float64 // standard error from the stratified variance
	Anchors      int     // anchors evaluated (points of a stratum evaluated exactly count once)
}

// minAnchorsPerCluster is the smallest number of anchors drawn from any non-empty cluster.
const minAnchorsPerCluster = 5

// SilhouetteAnchors estimates the weighted mean silhouette of p (SilhouetteExact) from about m
// anchor points stratified by cluster. Cluster c with weight W_c gets
// m_c = max(5, round(m W_c / W)) anchors drawn with replacement with probability proportional to
// weight inside the cluster; if m_c is at least the cluster's number of points, the whole cluster
// is evaluated exactly. Each anchor's s(i) is measured against every point of p (a(i) and b(i) are
// weighted means of Euclidean distances, the anchor itself excluded from its own cluster's mean;
// a singleton cluster's point has s = 0, Rousseeuw 1987). The estimate is
//
//	S = sum_c (W_c/W) mean_c(s),  Var(S) = sum_c (W_c/W)^2 var_c(s)/m_c
//
// (stratified sampling; var_c with divisor m_c - 1, 0 for exact strata), and the interval is
// S ± 1.96 sqrt(Var). Cost O(m n d). The result is NaN when fewer than 2 clusters are non-empty.
func SilhouetteAnchors(p Points, labels []int32, k, m int, rng *rand.Rand) SilhouetteEstimate {
	nan := math.NaN()
	out := SilhouetteEstimate{Mean: nan, Lo: nan, Hi: nan, SE: nan}
	if len(labels) != p.Len() {
		panic("criteria: SilhouetteAnchors: len(labels) != number of points")
	}
	members := make([][]int, k)
	cum := make([][]float64, k)
	wc := make([]float64, k)
	for i := 0; i < p.Len(); i++ {
		w := p.Weight(i)
		if w <= 0 {
			continue
		}
		l := labels[i]
		members[l] = append(members[l], i)
		wc[l] += w
		cum[l] = append(cum[l], wc[l])
	}
	W, nonEmpty := 0.0, 0
	for c := range wc {
		W += wc[c]
		if wc[c] > 0 {
			nonEmpty++
		}
	}
	if nonEmpty < 2 {
		return out
	}
	// Draw every stratum's anchors first (the draws do not depend on the silhouettes), then
	// measure them all in one batch.
	type stratum struct {
		c, from, to int
		exact       bool
	}
	var strata []stratum
	var anchors []int
	for c := 0; c < k; c++ {
		if wc[c] == 0 {
			continue
		}
		mc := int(math.Round(float64(m) * wc[c] / W))
		if mc < minAnchorsPerCluster {
			mc = minAnchorsPerCluster
		}
		st := stratum{c: c, from: len(anchors)}
		if mc >= len(members[c]) {
			st.exact = true
			anchors = append(anchors, members[c]...)
		} else {
			for a := 0; a < mc; a++ {
				u := rng.Float64() * wc[c]
				j := sort.SearchFloat64s(cum[c], u)
				if j >= len(members[c]) {
					j = len(members[c]) - 1
				}
				for j < len(members[c])-1 && cum[c][j] <= u {
					j++
				}
				anchors = append(anchors, members[c][j])
			}
		}
		st.to = len(anchors)
		strata = append(strata, st)
	}
	sil := make([]float64, len(anchors))
	newSilGroups(p, labels, k).silhouettes(p, labels, anchors, sil)
	est, variance := 0.0, 0.0
	for _, st := range strata {
		c := st.c
		share := wc[c] / W
		if st.exact {
			t := 0.0
			for a := st.from; a < st.to; a++ {
				t += p.Weight(anchors[a]) * sil[a]
			}
			est += share * t / wc[c]
			out.Anchors += st.to - st.from
			continue
		}
		var mean, m2 float64 // Welford
		for a := st.from; a < st.to; a++ {
			s := sil[a]
			delta := s - mean
			n := float64(a - st.from + 1)
			mean += delta / n
			m2 += delta * (s - mean)
		}
		mc := st.to - st.from
		est += share * mean
		variance += share * share * (m2 / float64(mc-1)) / float64(mc)
		out.Anchors += mc
	}
	out.Mean = est
	out.SE = math.Sqrt(variance)
	out.Lo, out.Hi = est-1.96*out.SE, est+1.96*out.SE
	return out
}

// SimplifiedSilhouette returns the weighted mean simplified (centroid-based) silhouette of p for
// the given centres (Hruschka, Campello and co-authors; reviewed in Vendramin, Campello & Hruschka
// 2010, "Relative clustering validity criteria: a comparative overview", Stat. Anal. Data Min.
// 3:209-235):
//
//	a'(i) = ||x_i - c_{l(i)}||,  b'(i) = min_{j != l(i)} ||x_i - c_j||,  s'(i) = (b' - a')/max(a', b')
//
// with l(i) the given label (normally the nearest centre) and s'(i) = 0 when a' = b' = 0. Centres
// of clusters with no weight are skipped as "other" centres. Cost O(n k d). NaN for k < 2.
func SimplifiedSilhouette(p Points, labels []int32, centres []float64) float64 {
	d := p.D
	k := len(centres) / d
	if len(labels) != p.Len() {
		panic("criteria: SimplifiedSilhouette: len(labels) != number of points")
	}
	size := make([]float64, k)
	for i, l := range labels {
		size[l] += p.Weight(i)
	}
	nonEmpty := 0
	for _, s := range size {
		if s > 0 {
			nonEmpty++
		}
	}
	if nonEmpty < 2 {
		return math.NaN()
	}
	tot, tw := 0.0, 0.0
	for i, l := range labels {
		w := p.Weight(i)
		if w == 0 {
			continue
		}
		x := p.Point(i)
		a := math.Sqrt(kmeans.Dist2(x, centres[int(l)*d:int(l)*d+d]))
		b := math.Inf(1)
		for j := 0; j < k; j++ {
			if int32(j) == l || size[j] == 0 {
				continue
			}
			b = math.Min(b, kmeans.Dist2(x, centres[j*d:j*d+d]))
		}
		b = math.Sqrt(b)
		s := 0.0
		if m := math.Max(a, b); m > 0 {
			s = (b - a) / m
		}
		tot += w * s
		tw += w
	}
	return tot / tw
}
