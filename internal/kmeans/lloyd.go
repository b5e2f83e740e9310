package kmeans

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"

	"github.com/kgauge/kgauge/internal/lanes"
)

// Result is one k-means solution on a Data set.
type Result struct {
	K       int
	Centres []float64 // k*D, row-major
	Labels  []int32   // nearest centre per point of the fitted Data
	Sizes   []float64 // total weight per cluster
	Cost    float64   // weighted sum of squared distances to the assigned centre (WCSS on p)
	Iters   int       // Lloyd iterations run
	// Lower holds, per point, a lower bound on its distance (not squared) to every centre but
	// its own (Hamerly's bound at the end of the run): with Labels, what a Warm start from these
	// centres needs.
	Lower []float64
}

// Warm describes a start of Lloyd made mostly of a fitted solution's centres, so that the first
// assignment measures each point against its old centre and the fresh ones instead of against
// every centre. It gives the same labels as a full first assignment (see hamerly.assignWarm).
type Warm struct {
	// Labels holds, per point, its nearest centre of the start among those not in Fresh (the
	// index in the start), or -1 where unknown (the point is measured against every centre).
	Labels []int32
	// Lower holds, per point, a lower bound on its distance (not squared) to every centre of the
	// start but Labels[i] and those in Fresh (a Result's Lower, when those centres are the
	// Result's, or a subset of them, unmoved).
	Lower []float64
	// Fresh lists the centres of the start that Labels and Lower do not cover.
	Fresh []int
}

// LloydOptions controls Lloyd iterations. Zero values mean defaults.
type LloydOptions struct {
	MaxIter int     // default 100
	Tol     float64 // stop when the relative cost decrease is <= Tol; default 1e-7
	// Context, when not nil, is checked once per iteration: once it is done Lloyd stops early and
	// returns the centres it has (the caller checks the context and discards them).
	Context context.Context
	// Spread, when not nil, is NewSpread of the Data Lloyd runs on, computed once for many runs
	// (Fit sets it for its restarts); otherwise each run computes it. One of another point set
	// (other length or width) is not used.
	Spread *Spread
	// Warm, when not nil, describes how the start relates to a fitted solution; only the first
	// assignment uses it (Fit ignores it).
	Warm *Warm
}

func (o LloydOptions) withDefaults() LloydOptions {
	if o.MaxIter <= 0 {
		o.MaxIter = 100
	}
	if o.Tol <= 0 {
		o.Tol = 1e-7
	}
	return o
}

// Lloyd runs weighted Lloyd iterations (Lloyd 1982, "Least squares quantization in PCM") from
// init (k*D values; copied, not modified): assign every point to its nearest centre, move each
// centre to the weighted mean of its points, until no label changes, the relative decrease of the
// weighted cost is <= opt.Tol, or opt.MaxIter iterations have run. Assignments use Hamerly's
// bounds (Hamerly 2010, "Making k-means even faster", SIAM SDM): an upper bound on the distance to
// the assigned centre and a lower bound on the distance to every other centre, moved by the centre
// shifts, skip points whose label cannot change; the result is that of plain Lloyd up to
// floating-point ties. The returned Labels are the nearest centres of the returned Centres and Cost
// is computed exactly as sum w ||x - c||^2.
//
// Empty clusters: after each assignment a cluster with no weight is re-seeded with the point
// farthest (largest squared distance) from its current centre among points whose cluster keeps
// some weight; if every point is at distance 0 (fewer distinct points than k) the centre is left
// where it is, and the final Result then has duplicate centres with Sizes 0.
func Lloyd(p Data, init []float64, opt LloydOptions) Result {
	p.check()
	d := p.D
	if len(init) == 0 || len(init)%d != 0 {
		panic("kmeans: Lloyd: len(init) is not a positive multiple of D")
	}
	opt = opt.withDefaults()
	k := len(init) / d
	n := p.Len()
	if w := opt.Warm; w != nil && (len(w.Labels) != n || len(w.Lower) != n || slices.ContainsFunc(w.Fresh, func(f int) bool { return f < 0 || f >= k })) {
		panic("kmeans: Lloyd: Warm does not fit the points or the start")
	}
	c := append([]float64(nil), init...)
	res := Result{K: k, Centres: c, Labels: make([]int32, n), Sizes: make([]float64, k)}
	if n == 0 {
		return res
	}
	h := newHamerly(p, k)
	old := make([]float64, k*d)
	cs := newCentred(p, k, opt.Spread)
	prev := math.Inf(1)
	for it := 1; it <= opt.MaxIter; it++ {
		if opt.Context != nil && opt.Context.Err() != nil {
			break
		}
		res.Iters = it
		var changed int
		if it == 1 && opt.Warm != nil {
			changed = h.assignWarm(c, res.Labels, opt.Warm)
		} else {
			changed = h.assign(c, res.Labels, it == 1)
		}
		if it > 1 && changed == 0 {
			break // labels unchanged: the centres are already their means
		}
		reseeded := h.reseed(c, res.Labels, res.Sizes)
		if reseeded {
			changed++
		}
		copy(old, c)
		cost := cs.update(p, res.Labels, h.moved, c, res.Sizes, it == 1 || reseeded || changed > n/incrementalShare)
		h.move(old, c, res.Labels)
		if cost == 0 || (!math.IsInf(prev, 1) && prev-cost <= opt.Tol*prev) {
			break
		}
		prev = cost
	}
	h.assign(c, res.Labels, false)
	res.Cost = exactCost(p, c, res.Labels, res.Sizes)
	res.Lower = h.lower
	return res
}

// hamerly holds the per-point bounds of Hamerly's algorithm (Euclidean distances).
type hamerly struct {
	p     Data
	k     int
	upper []float64 // >= distance to the assigned centre
	lower []float64 // <= distance to every other centre
	half  []float64 // half the distance from each centre to its nearest other centre
	shift []float64
	g     grouped // the centres for full scans in vector lanes (lanes.Vector)
	// held counts the points of positive weight each cluster holds under the labels, kept by
	// assign and reseed: a cluster holding none has no weight, which is all reseed looks for.
	held []int
	// moved lists, in order, the points whose label the last assignment changed, as long as they
	// are at most a 1/incrementalShare of the points (beyond that centred.update sums every point).
	moved []int32
	fail  []int32 // scratch of assign: the points whose bounds fail
}

func newHamerly(p Data, k int) *hamerly {
	n := p.Len()
	return &hamerly{p: p, k: k, upper: make([]float64, n), lower: make([]float64, n),
		half: make([]float64, k), shift: make([]float64, k), held: make([]int, k)}
}

// countHeld recounts h.held from labels.
func (h *hamerly) countHeld(labels []int32) {
	clear(h.held)
	for i, l := range labels {
		if h.p.Weight(i) > 0 {
			h.held[l]++
		}
	}
}

// nearest2 returns the nearest and second-nearest squared distances of x to the centres,
// four centres at a time (independent sums, x loaded once per four centres).
func nearest2(x, c []float64, k, d int) (best int, d1, d2 float64) {
	d1, d2 = math.Inf(1), math.Inf(1)
	consider := func(v float64, j int) {
		if v < d1 {
			d2, d1, best = d1, v, j
		} else if v < d2 {
			d2 = v
		}
	}
	j := 0
	for ; j+3 < k; j += 4 {
		c0 := c[j*d : j*d+d : j*d+d]
		c1 := c[(j+1)*d : (j+1)*d+d : (j+1)*d+d]
		c2 := c[(j+2)*d : (j+2)*d+d : (j+2)*d+d]
		c3 := c[(j+3)*d : (j+3)*d+d : (j+3)*d+d]
		c0, c1, c2, c3 = c0[:len(x)], c1[:len(x)], c2[:len(x)], c3[:len(x)]
		var s0, s1, s2, s3 float64
		for t, v := range x {
			e0, e1, e2, e3 := v-c0[t], v-c1[t], v-c2[t], v-c3[t]
			s0 += e0 * e0
			s1 += e1 * e1
			s2 += e2 * e2
			s3 += e3 * e3
		}
		consider(s0, j)
		consider(s1, j+1)
		consider(s2, j+2)
		consider(s3, j+3)
	}
	for ; j < k; j++ {
		consider(Dist2(x, c[j*d:j*d+d]), j)
	}
	return best, d1, d2
}

// scanDist2 returns the squared distance from x to centre j of the k centres c as the full scans
// (nearest2 and grouped.nearest2) take it: summed over t in order for the centres in whole groups
// of four, Dist2 for the rest.
func scanDist2(x, c []float64, j, k, d int) float64 {
	cj := c[j*d : j*d+d : j*d+d]
	if j >= 4*(k/4) {
		return Dist2(x, cj)
	}
	cj = cj[:len(x)]
	var s float64
	for t, v := range x {
		e := v - cj[t]
		s += e * e
	}
	return s
}

// halves sets h.half[j] to half the distance from centre j to its nearest other centre, among
// the centres not marked in skip (nil: all of them); skipped centres keep their value.
func (h *hamerly) halves(c []float64, skip []bool) {
	k, d := h.k, h.p.D
	for j := 0; j < k; j++ {
		if skip != nil && skip[j] {
			continue
		}
		m := math.Inf(1)
		for jj := 0; jj < k; jj++ {
			if jj != j && (skip == nil || !skip[jj]) {
				m = math.Min(m, Dist2(c[j*d:j*d+d], c[jj*d:jj*d+d]))
			}
		}
		h.half[j] = 0.5 * math.Sqrt(m)
	}
}

// assign updates labels (all points when full) and returns the number of changed labels.
func (h *hamerly) assign(c []float64, labels []int32, full bool) int {
	p, k, d := h.p, h.k, h.p.D
	h.moved = h.moved[:0]
	if k == 1 {
		changed := 0
		for i := range labels {
			if labels[i] != 0 {
				labels[i] = 0
				changed++
			}
		}
		if full || changed > 0 {
			h.countHeld(labels)
		}
		if full {
			return len(labels)
		}
		return changed
	}
	if !full {
		h.halves(c, nil)
	}
	grouped := lanes.Vector && k >= 4
	if grouped {
		h.g.load(c, k, d)
	}
	changed := 0
	upper, lower, half := h.upper[:len(labels)], h.lower[:len(labels)], h.half[:k]
	if full {
		for i := range labels {
			b, d1, d2 := h.nearest2(p.Point(i), c, grouped)
			labels[i] = int32(b)
			upper[i], lower[i] = math.Sqrt(d1), math.Sqrt(d2)
		}
		h.countHeld(labels)
		return len(labels)
	}
	// Three passes over the points, each point's steps in the same order as one loop would take
	// them (the centres do not change within an assignment): the points whose bounds fail, then
	// their upper bounds tightened, then a full scan of those still failing. Apart, each pass is
	// a short loop whose branches the processor predicts, instead of one that mispredicts on
	// about a third of the points.
	if cap(h.fail) < len(labels) {
		h.fail = make([]int32, len(labels))
	}
	fail := h.fail[:len(labels)]
	nf := 0
	for i := range labels {
		// m = max(half[a], lower[i]); the bounds are never NaN (the points are finite), so the
		// comparison gives math.Max's value without its NaN and signed-zero branches.
		m := half[labels[i]]
		if l := lower[i]; l > m {
			m = l
		}
		fail[nf] = int32(i)
		if upper[i] > m {
			nf++
		}
	}
	fail = fail[:nf]
	nf = 0
	for _, i := range fail {
		a := labels[i]
		m := half[a]
		if l := lower[i]; l > m {
			m = l
		}
		u := math.Sqrt(Dist2(p.Point(int(i)), c[int(a)*d:int(a)*d+d]))
		upper[i] = u
		fail[nf] = i
		if u > m {
			nf++
		}
	}
	for _, i := range fail[:nf] {
		b, d1, d2 := h.nearest2(p.Point(int(i)), c, grouped)
		if int32(b) != labels[i] {
			changed++
			if p.Weight(int(i)) > 0 {
				h.held[labels[i]]--
				h.held[b]++
			}
			if len(h.moved) <= len(labels)/incrementalShare {
				h.moved = append(h.moved, i)
			}
		}
		labels[i] = int32(b)
		upper[i], lower[i] = math.Sqrt(d1), math.Sqrt(d2)
	}
	return changed
}

// nearest2 is the package's nearest2 of x to the centres c, by h.g when grouped (loaded by the
// caller).
func (h *hamerly) nearest2(x, c []float64, grouped bool) (best int, d1, d2 float64) {
	if grouped {
		return h.g.nearest2(x, c, h.k, h.p.D)
	}
	return nearest2(x, c, h.k, h.p.D)
}

// assignWarm is the first assignment (assign with full set) of a start described by w. A point
// whose old centre l = w.Labels[i] is strictly nearer than every other centre not in w.Fresh (its
// distance below w.Lower[i], or below half the distance from l to the nearest of them) is measured
// against l and the fresh centres alone, the lower index winning among equal distances; any other
// point against every centre. Either way each distance is the one a full scan takes (scanDist2),
// so the labels and upper bounds are those of the full assignment; only the lower bounds may be
// looser.
func (h *hamerly) assignWarm(c []float64, labels []int32, w *Warm) int {
	p, k, d := h.p, h.k, h.p.D
	if k == 1 {
		return h.assign(c, labels, true)
	}
	fresh := make([]bool, k)
	for _, f := range w.Fresh {
		fresh[f] = true
	}
	h.halves(c, fresh)
	grouped := lanes.Vector && k >= 4
	if grouped {
		h.g.load(c, k, d)
	}
	for i := range labels {
		x := p.Point(i)
		if l := int(w.Labels[i]); l >= 0 {
			if l >= k || fresh[l] {
				panic("kmeans: Lloyd: a Warm label is not one of the start's old centres")
			}
			bd := scanDist2(x, c, l, k, d)
			if u := math.Sqrt(bd); u < w.Lower[i] || u < h.half[l] {
				// Every other old centre is at least w.Lower[i] away, and at least 2 half[l] - u
				// by the triangle inequality.
				best, lo := l, max(w.Lower[i], 2*h.half[l]-u)
				for _, f := range w.Fresh {
					v := scanDist2(x, c, f, k, d)
					other := v
					if v < bd || (v == bd && f < best) {
						other, best, bd = bd, f, v
					}
					if r := math.Sqrt(other); r < lo {
						lo = r
					}
				}
				labels[i] = int32(best)
				h.upper[i], h.lower[i] = math.Sqrt(bd), lo
				continue
			}
		}
		b, d1, d2 := h.nearest2(x, c, grouped)
		labels[i] = int32(b)
		h.upper[i], h.lower[i] = math.Sqrt(d1), math.Sqrt(d2)
	}
	h.countHeld(labels)
	return len(labels)
}

// reseed re-seeds empty clusters with the farthest points (see Lloyd); it reports whether it did.
// A cluster is empty when it holds no weight; the weights are never negative, so that is when it
// holds no point of positive weight (h.held), and a run whose clusters all hold one costs nothing
// here. sizes is scratch.
func (h *hamerly) reseed(c []float64, labels []int32, sizes []float64) bool {
	if !slices.Contains(h.held, 0) {
		return false // every cluster holds a point of positive weight, so none is empty
	}
	defer h.countHeld(labels)
	p, d := h.p, h.p.D
	for j := range sizes {
		sizes[j] = 0
	}
	for i, l := range labels {
		sizes[l] += p.Weight(i)
	}
	empty := false
	for _, s := range sizes {
		if s == 0 {
			empty = true
		}
	}
	if !empty {
		return false
	}
	dist2 := make([]float64, len(labels))
	for i, l := range labels {
		dist2[i] = Dist2(p.Point(i), c[int(l)*d:int(l)*d+d])
	}
	before := append([]int32(nil), labels...)
	reseedEmpty(p, labels, dist2, sizes, h.k)
	did := false
	for i := range labels {
		if labels[i] != before[i] {
			// The point now sits on its own (moved) centre; 0 is a valid lower bound.
			h.upper[i], h.lower[i] = 0, 0
			did = true
		}
	}
	return did
}

// move shifts the bounds by the centre movements from old to c.
func (h *hamerly) move(old, c []float64, labels []int32) {
	k, d := h.k, h.p.D
	m1, m2, arg := 0.0, 0.0, -1
	for j := 0; j < k; j++ {
		s := math.Sqrt(Dist2(old[j*d:j*d+d], c[j*d:j*d+d]))
		h.shift[j] = s
		if s > m1 {
			m2, m1, arg = m1, s, j
		} else if s > m2 {
			m2 = s
		}
	}
	for i, l := range labels {
		h.upper[i] += h.shift[l]
		if int(l) == arg {
			h.lower[i] -= m2
		} else {
			h.lower[i] -= m1
		}
	}
}

// reseedEmpty moves the farthest points into empty clusters (see Lloyd).
func reseedEmpty(p Data, labels []int32, dist2, sizes []float64, k int) {
	for j := range sizes {
		sizes[j] = 0
	}
	for i := range labels {
		sizes[labels[i]] += p.Weight(i)
	}
	for j := 0; j < k; j++ {
		if sizes[j] > 0 {
			continue
		}
		far, fd := -1, 0.0
		for i := range labels {
			if dist2[i] > fd && p.Weight(i) > 0 && sizes[labels[i]] > p.Weight(i) {
				far, fd = i, dist2[i]
			}
		}
		if far < 0 {
			continue
		}
		w := p.Weight(far)
		sizes[labels[far]] -= w
		labels[far] = int32(j)
		sizes[j] += w
		dist2[far] = 0
	}
}

// Spread is what Lloyd needs to get the cost of each iteration from the cluster sums instead of
// a second sweep over the points: the weighted mean mu of a point set, the weighted squared
// distances q_i = w_i ||x_i - mu||^2 of its points and tss = sum q_i. It depends on the points
// alone, so one serves every Lloyd run on them (LloydOptions.Spread). It is read-only once made.
type Spread struct {
	mu  []float64
	q   []float64
	tss float64
}

// NewSpread returns the Spread of p.
func NewSpread(p Data) *Spread {
	d, n := p.D, p.Len()
	sp := &Spread{mu: make([]float64, d), q: make([]float64, n)}
	tw := 0.0
	for i := 0; i < n; i++ {
		w := p.Weight(i)
		tw += w
		for t, v := range p.Point(i) {
			sp.mu[t] += w * v
		}
	}
	if tw > 0 {
		for t := range sp.mu {
			sp.mu[t] /= tw
		}
	}
	for i := 0; i < n; i++ {
		sp.q[i] = p.Weight(i) * Dist2(p.Point(i), sp.mu)
		sp.tss += sp.q[i]
	}
	return sp
}

// fits reports whether sp can be p's Spread (the same number of points and columns).
func (sp *Spread) fits(p Data) bool {
	return sp != nil && len(sp.q) == p.Len() && len(sp.mu) == p.D
}

// centred holds the Spread of the points of one Lloyd run, and the per-cluster sums of the last
// update with the labels they were taken with, so that an iteration in which few labels changed
// moves only those points' terms (see update).
type centred struct {
	*Spread

	sums   []float64 // sum of w_i x_i per cluster, k*d
	weight []float64 // sum of w_i per cluster
	count  []int     // points of positive weight per cluster
	qsum   []float64 // sum of q_i per cluster
	was    []int32   // the labels the sums were taken with
	since  int       // incremental updates since the last full one
}

// incrementalShare: an update moves only the changed points' terms when at most 1/incrementalShare
// of the labels changed (each such point costs two of a full update's additions), and
// refreshEvery bounds the incremental updates in a row, so rounding cannot accumulate.
const (
	incrementalShare = 4
	refreshEvery     = 16
)

func newCentred(p Data, k int, sp *Spread) *centred {
	d, n := p.D, p.Len()
	if !sp.fits(p) {
		sp = NewSpread(p)
	}
	return &centred{Spread: sp, sums: make([]float64, k*d),
		weight: make([]float64, k), count: make([]int, k), qsum: make([]float64, k), was: make([]int32, n)}
}

// costRelFloor is the smallest cost, relative to the total sum of squares, that centred.update
// takes from the identity; below it the cancellation could exceed about 1e-9 of the cost (against
// Lloyd's default tolerance of 1e-7) and the cost is summed point by point instead.
const costRelFloor = 1e-6

// update moves each non-empty centre to the weighted mean of its points and returns the cost
// sum w ||x - c_label||^2 of the new centres, from the identity
//
//	sum_{i in j} w_i ||x_i - c_j||^2 = sum_{i in j} w_i ||x_i - mu||^2 - W_j ||c_j - mu||^2
//
// (c_j the weighted mean of cluster j, W_j its weight), which needs no second sweep over the
// points. With full false it takes the cluster sums of the last update and moves the terms of
// the points whose label changed since, listed in moved in increasing order (refreshEvery such
// updates at most in a row); otherwise it
// sums every point. When the cost is below costRelFloor times the total sum of squares it is
// recomputed exactly. It also fills sizes.
func (cs *centred) update(p Data, labels, moved []int32, c, sizes []float64, full bool) float64 {
	d := p.D
	if full || cs.since >= refreshEvery {
		cs.since = 0
		clear(cs.sums)
		clear(cs.weight)
		clear(cs.count)
		clear(cs.qsum)
		for i, l := range labels {
			w := p.Weight(i)
			x := p.Point(i)
			s := cs.sums[int(l)*d : int(l)*d+d]
			s = s[:len(x)]
			for t, v := range x {
				s[t] += w * v
			}
			cs.weight[l] += w
			if w > 0 {
				cs.count[l]++
			}
			cs.qsum[l] += cs.q[i]
		}
		copy(cs.was, labels)
	} else {
		cs.since++
		for _, m := range moved {
			i := int(m)
			o, l := cs.was[i], labels[i]
			if o == l {
				continue
			}
			cs.was[i] = l
			w := p.Weight(i)
			x := p.Point(i)
			so := cs.sums[int(o)*d : int(o)*d+d]
			sl := cs.sums[int(l)*d : int(l)*d+d]
			so, sl = so[:len(x)], sl[:len(x)]
			for t, v := range x {
				so[t] -= w * v
				sl[t] += w * v
			}
			cs.weight[o] -= w
			cs.weight[l] += w
			if w > 0 {
				cs.count[o]--
				cs.count[l]++
			}
			cs.qsum[o] -= cs.q[i]
			cs.qsum[l] += cs.q[i]
		}
	}
	cost := 0.0
	for j := range sizes {
		if cs.count[j] == 0 {
			// No weight: clear what rounding left of the removed points.
			clear(cs.sums[j*d : j*d+d])
			cs.weight[j], cs.qsum[j] = 0, 0
		}
		sz := cs.weight[j]
		sizes[j] = sz
		if sz > 0 {
			for t := 0; t < d; t++ {
				c[j*d+t] = cs.sums[j*d+t] / sz
			}
			cost += cs.qsum[j] - sz*Dist2(c[j*d:(j+1)*d], cs.mu)
		}
	}
	if !(cost > costRelFloor*cs.tss) {
		return exactCost(p, c, labels, sizes)
	}
	return cost
}

// exactCost returns sum w ||x - c_label||^2 and fills sizes.
func exactCost(p Data, c []float64, labels []int32, sizes []float64) float64 {
	d := p.D
	for j := range sizes {
		sizes[j] = 0
	}
	cost := 0.0
	for i, l := range labels {
		w := p.Weight(i)
		sizes[l] += w
		cost += w * Dist2(p.Point(i), c[int(l)*d:int(l)*d+d])
	}
	return cost
}

// Cost returns the weighted k-means cost sum_i w_i min_j ||x_i - c_j||^2 of centres on p,
// with the nearest centre found by Assign and the distance recomputed exactly.
func Cost(p Data, centres []float64) float64 {
	p.check()
	labels := make([]int32, p.Len())
	Assign(p.X, p.D, centres, labels, nil)
	sizes := make([]float64, len(centres)/p.D)
	return exactCost(p, centres, labels, sizes)
}

// FitOptions controls Fit. Zero values mean defaults.
type FitOptions struct {
	Restarts int // k-means++ seedings (default 1 when Init is empty, else 0)
	Lloyd    LloydOptions
	Init     [][]float64 // extra initial centre sets (k*D each; others are ignored)
	Rand     *rand.Rand  // nil means rand.New(rand.NewPCG(1, 2))
	// Context, when not nil, is checked before each restart, every few k-means++ steps and once per
	// Lloyd iteration: once it is done Fit returns early with whatever it has (the caller checks
	// the context and discards it).
	Context context.Context
}

// Fit returns the lowest-cost Lloyd result over each Init set (tried first, in order) and then
// Restarts k-means++ seedings (PlusPlus); ties keep the earlier one. Init sets whose length is
// not k*D are ignored. When p has fewer distinct points than k the result has Cost 0 and
// duplicate centres, some with Sizes 0 (see Lloyd). An empty p gives zero centres, Cost 0.
// Fit panics if k < 1.
func Fit(p Data, k int, opt FitOptions) Result {
	p.check()
	if k < 1 {
		panic("kmeans: Fit: k < 1")
	}
	if p.Len() == 0 {
		return Result{K: k, Centres: make([]float64, k*p.D), Sizes: make([]float64, k)}
	}
	rng := opt.Rand
	if rng == nil {
		rng = rand.New(rand.NewPCG(1, 2))
	}
	if opt.Lloyd.Context == nil {
		opt.Lloyd.Context = opt.Context
	}
	opt.Lloyd.Warm = nil // a Warm describes one start, not Fit's seedings
	if !opt.Lloyd.Spread.fits(p) {
		opt.Lloyd.Spread = NewSpread(p)
	}
	cancelled := func() bool { return opt.Context != nil && opt.Context.Err() != nil }
	var best Result
	have := false
	try := func(init []float64) {
		r := Lloyd(p, init, opt.Lloyd)
		if !have || r.Cost < best.Cost {
			best, have = r, true
		}
	}
	for _, init := range opt.Init {
		if len(init) == k*p.D && (!have || !cancelled()) {
			try(init)
		}
	}
	restarts := opt.Restarts
	if restarts <= 0 && !have {
		restarts = 1
	}
	var seed []float64
	for r := 0; r < restarts; r++ {
		if have && cancelled() {
			break
		}
		seed = plusPlus(opt.Context, p, k, rng, seed)
		try(seed)
	}
	return best
}
