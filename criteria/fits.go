package criteria

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"sync"

	"github.com/kgauge/kgauge/internal/kmeans"
	"github.com/kgauge/kgauge/internal/lanes"
)

// pathOptions controls fitPath.
type pathOptions struct {
	Restarts int                     // k-means++ seedings per k (at least one when init gives none)
	Cheap    float64                 // more seedings where cheap (restartsFor); 0: opt.Restarts only
	Lloyd    kmeans.LloydOptions     // Lloyd settings of every fit
	Race     kmeans.LloydOptions     // when Tol is set: the sweeps' starts run with these settings first, and only the best runs on (see fitPath)
	Init     func(k int) [][]float64 // extra initial centres per k (may be nil)
	Rand     func(k int) *rand.Rand  // random stream per k
	Workers  int                     // goroutines for the per-k restarts (<= 1: sequential)
	Stop     func() bool             // reports cancellation (may be nil)
	Pool     *pool                   // when set, every running restart and the sweeps hold one of its slots
	Report   func(units float64)     // when set, receives the expected cost of each finished step (restarts and first sweeps per k)
	Holding  func()                  // when set, called once the restarts hold their slots of Pool (Evaluate then queues the jobs that fill the rest)
	// EndsOnly restricts the restarts (and opt.Init's starts) to lo and hi: every k between
	// starts from the sweeps alone (the downward one from the fit at hi starts any k the upward
	// one could not, where every point sits on a centre of k - 1). Evaluate sets it on the gap's
	// reference paths.
	EndsOnly bool
}

// Sweep settings of fitPath: starts tried per k and direction, and the most rounds of both
// sweeps (a round that improves no k ends them).
const (
	sweepTries  = 3
	sweepRounds = 2
)

// cheapWork is the point x centre x dimension count of one Lloyd iteration below which fitPath
// adds k-means++ restarts (Evaluate's main and gap paths): restarts = cheapWork / (n k D), at
// least the requested number and at most maxRestarts.
const (
	cheapWork   = 4e6
	maxRestarts = 20
)

// restartsFor returns the k-means++ seedings of fitPath at k (see cheapWork).
func restartsFor(p Points, k, base int, cheap float64) int {
	if cheap <= 0 {
		return base
	}
	r := int(cheap / (float64(p.Len()) * float64(k) * float64(p.D)))
	return max(base, min(r, maxRestarts))
}

// fitPath returns a k-means fit for every k in lo..hi (index k - lo). For each k it keeps the
// cheapest of:
//   - Lloyd from each of opt.Init(k) and from opt.Restarts greedy k-means++ seedings (kmeans.Fit;
//     with opt.EndsOnly at lo and hi only);
//   - upward sweep (k ascending): Lloyd from the kept k-1 centres plus one point drawn with
//     probability proportional to w D^2 (the greedy k-means++ step: 2 + ln k draws, the one that
//     lowers the potential most), sweepTries times;
//   - downward sweep (k descending): Lloyd from the kept k+1 centres with one of the sweepTries
//     pairs whose merge raises the cost least (Ward's cost w_a w_b / (w_a + w_b) ||c_a - c_b||^2)
//     merged into their weighted mean.
//
// Both sweeps run again (at most sweepRounds times) while they improve some k. With opt.Race.Tol
// set, the starts of one step at one k (its restarts and opt.Init's starts, when more than one;
// the up to sweepTries starts of one sweep) are first run with opt.Race's looser settings and
// only the cheapest is run on with opt.Lloyd's (a race), instead of running every start to
// opt.Lloyd's tolerance. With opt.Cheap
// set, k gets more restarts where its Lloyd iterations are cheap (restartsFor).
//
// The sweeps carry a good solution at one k to its neighbours, where independent restarts often
// land in a local optimum (two centres in one cluster, one centre across two). The result does not
// depend on opt.Workers.
func fitPath(p Points, lo, hi int, opt pathOptions) []Fit {
	n := hi - lo + 1
	fits := make([]Fit, n)
	spread := kmeans.NewSpread(p) // one for every Lloyd run of the path
	opt.Lloyd.Spread, opt.Race.Spread = spread, spread
	stop := func() bool { return opt.Stop != nil && opt.Stop() }
	report := func(units float64) {
		if opt.Report != nil {
			opt.Report(units)
		}
	}
	one := func(k int) {
		if opt.EndsOnly && k > lo && k < hi {
			return // started by the sweeps below
		}
		var init [][]float64
		if opt.Init != nil {
			init = opt.Init(k)
		}
		r := restartsFor(p, k, opt.Restarts, opt.Cheap)
		if opt.Race.Tol > 0 && r+len(init) > 1 {
			best := kmeans.Fit(p, k, kmeans.FitOptions{Restarts: r, Init: init, Lloyd: opt.Race, Rand: opt.Rand(k)})
			fits[k-lo] = runOn(p, best, opt.Lloyd)
		} else {
			fits[k-lo] = kmeans.Fit(p, k, kmeans.FitOptions{Restarts: r, Init: init, Lloyd: opt.Lloyd, Rand: opt.Rand(k)})
		}
		report(restartCost(p.Len(), k, p.D, r+len(init)))
	}
	// The caller holds one of opt.Pool's slots from here to the end of the sweeps, and each
	// helper goroutine of the restarts one more while they last, so no queued job slips in
	// between two restarts or between the restarts and the sweeps.
	if opt.Pool != nil {
		opt.Pool.acquire()
		defer opt.Pool.release()
	}
	var next sync.Mutex
	k := hi + 1
	restarts := func() {
		for !stop() {
			next.Lock()
			k--
			kk := k
			next.Unlock()
			if kk < lo {
				return
			}
			one(kk)
		}
	}
	var wg, held sync.WaitGroup
	for w := 1; w < opt.Workers; w++ {
		wg.Add(1)
		held.Add(1)
		go func() {
			defer wg.Done()
			if opt.Pool != nil {
				opt.Pool.acquire()
				defer opt.Pool.release()
			}
			held.Done()
			restarts()
		}()
	}
	held.Wait()
	if opt.Holding != nil {
		opt.Holding()
	}
	restarts()
	wg.Wait()
	if stop() {
		return fits
	}
	// ver[i] counts the changes of fits[i]; upFrom[i] and downFrom[i] hold the version of the
	// neighbour that k = lo + i was last swept from. A sweep start depends only on that neighbour's
	// fit and on opt.Rand(k), which restarts each round, so a sweep from an unchanged neighbour
	// would repeat Lloyd runs whose results fits[i] already beats: it is skipped.
	ver := make([]int, n)
	upFrom, downFrom := make([]int, n), make([]int, n)
	for i := range upFrom {
		upFrom[i], downFrom[i] = -1, -1
	}
	keep := func(k int, r Fit) bool {
		if fits[k-lo].Centres == nil || r.Cost < fits[k-lo].Cost*(1-1e-9) {
			fits[k-lo] = r
			ver[k-lo]++
			return true
		}
		return false
	}
	// try runs Lloyd from each start (warms[i] describing start i) and keeps the best result at
	// k. With opt.Race set, every start first runs with opt.Race's (looser) settings and only the
	// cheapest is run on to opt.Lloyd's.
	try := func(k int, inits [][]float64, warms []*kmeans.Warm) bool {
		if opt.Race.Tol == 0 || len(inits) < 2 {
			kept := false
			for _, r := range lloydAll(p, inits, warms, opt.Lloyd, opt.Pool) {
				kept = keep(k, r) || kept
			}
			return kept
		}
		var best Fit
		for i, r := range lloydAll(p, inits, warms, opt.Race, opt.Pool) {
			if i == 0 || r.Cost < best.Cost {
				best = r
			}
		}
		return keep(k, runOn(p, best, opt.Lloyd))
	}
	for round := 0; round < sweepRounds; round++ {
		improved := false
		for k := max(lo, 2); k <= hi && !stop(); k++ {
			if k-1 < lo || upFrom[k-lo] == ver[k-1-lo] {
				continue
			}
			upFrom[k-lo] = ver[k-1-lo]
			rng := opt.Rand(k)
			from := fits[k-1-lo]
			var inits [][]float64
			var warms []*kmeans.Warm
			for t := 0; t < sweepTries; t++ {
				if init, ok := addCentre(p, from, rng); ok {
					inits = append(inits, init)
					warms = append(warms, from.WarmAdded())
				}
			}
			improved = try(k, inits, warms) || improved
			if round == 0 {
				report(sweepCost(p.Len(), k, p.D) / 2)
			}
		}
		for k := hi - 1; k >= lo && !stop(); k-- {
			if round == 0 {
				report(sweepCost(p.Len(), k, p.D) / 2)
			}
			if downFrom[k-lo] == ver[k+1-lo] {
				continue
			}
			downFrom[k-lo] = ver[k+1-lo]
			inits, warms := mergeCheapest(fits[k+1-lo], p.D, sweepTries)
			improved = try(k, inits, warms) || improved
		}
		if !improved {
			break
		}
	}
	return fits
}

// addCentre returns the centres of f plus one point of p chosen by the greedy k-means++ step, or
// false when every point coincides with a centre.
func addCentre(p Points, f Fit, rng *rand.Rand) ([]float64, bool) {
	d, m := p.D, p.Len()
	if len(f.Labels) != m || f.Cost <= 0 {
		return nil, false
	}
	d2 := make([]float64, m)
	tot := 0.0
	for i := 0; i < m; i++ {
		l := int(f.Labels[i])
		d2[i] = kmeans.Dist2(p.Point(i), f.Centres[l*d:l*d+d])
		tot += p.Weight(i) * d2[i]
	}
	if !(tot > 0) {
		return nil, false
	}
	trials := 2 + int(math.Log(float64(f.K+1)))
	// The candidates are drawn from the same d2, so all are drawn first and measured in one sweep
	// over the points, four at a time (lanes.Dist2x4: each Dist2's own value); each potential is
	// still summed over the points in order, so the choice is that of one candidate at a time.
	groups := (trials + 3) / 4
	idx := make([]int, 0, trials)
	rows := make([]float64, 4*groups*d)
	for t := 0; t < trials; t++ {
		u := rng.Float64() * tot
		i := -1
		acc := 0.0
		for j := 0; j < m; j++ {
			v := p.Weight(j) * d2[j]
			if v <= 0 {
				continue
			}
			i = j
			acc += v
			if u < acc {
				break
			}
		}
		if i < 0 {
			break
		}
		idx = append(idx, i)
	}
	if len(idx) == 0 {
		return nil, false
	}
	for r := range 4 * groups {
		copy(rows[r*d:(r+1)*d], p.Point(idx[min(r, len(idx)-1)]))
	}
	pots := make([]float64, len(idx))
	var four [4]float64
	for i := 0; i < m; i++ {
		x, w := p.Point(i), p.Weight(i)
		for g := 0; g < len(idx); g += 4 {
			lanes.Dist2x4(x, rows[g*d:(g+4)*d], &four)
			for t := g; t < min(g+4, len(idx)); t++ {
				pots[t] += w * math.Min(d2[i], four[t-g])
			}
		}
	}
	best, bestPot := -1, math.Inf(1)
	for t, pot := range pots {
		if pot < bestPot {
			best, bestPot = idx[t], pot
		}
	}
	if best < 0 {
		return nil, false
	}
	c := make([]float64, 0, len(f.Centres)+d)
	c = append(c, f.Centres...)
	return append(c, p.Point(best)...), true
}

// mergeCheapest returns, for each of the (at most) m pairs of f's centres with the smallest
// Ward merge cost, the k-1 centres after merging that pair into its weighted mean (in place of
// the pair's first centre), with the Warm start that describes them; nil when f has fewer than
// two centres.
func mergeCheapest(f Fit, d, m int) ([][]float64, []*kmeans.Warm) {
	k := f.K
	if k < 2 || len(f.Sizes) != k {
		return nil, nil
	}
	type pair struct {
		a, b int
		c    float64
	}
	var ps []pair
	for a := 0; a < k; a++ {
		for b := a + 1; b < k; b++ {
			wa, wb := f.Sizes[a], f.Sizes[b]
			var c float64
			if wa+wb > 0 {
				c = wa * wb / (wa + wb) * kmeans.Dist2(f.Centres[a*d:a*d+d], f.Centres[b*d:b*d+d])
			}
			ps = append(ps, pair{a, b, c})
		}
	}
	slices.SortStableFunc(ps, func(x, y pair) int { return cmp.Compare(x.c, y.c) })
	var out [][]float64
	var warms []*kmeans.Warm
	for _, q := range ps[:min(m, len(ps))] {
		warms = append(warms, f.WarmMerged(q.a, q.b))
		c := make([]float64, 0, (k-1)*d)
		wa, wb := f.Sizes[q.a], f.Sizes[q.b]
		for j := 0; j < k; j++ {
			switch j {
			case q.a:
				for t := 0; t < d; t++ {
					ca, cb := f.Centres[q.a*d+t], f.Centres[q.b*d+t]
					if wa+wb > 0 {
						c = append(c, (wa*ca+wb*cb)/(wa+wb))
					} else {
						c = append(c, ca)
					}
				}
			case q.b:
			default:
				c = append(c, f.Centres[j*d:j*d+d]...)
			}
		}
		out = append(out, c)
	}
	return out, warms
}

// runOn runs Lloyd on from the fit f with the settings o (f's labels and bounds start it warm).
func runOn(p Points, f Fit, o kmeans.LloydOptions) Fit {
	o.Warm = f.WarmSame()
	return kmeans.Lloyd(p, f.Centres, o)
}

// pathCost is the expected cost of fitPath(p, lo, hi, opt): the restarts of every k (with
// opt.Init's starts) and one round of both sweeps.
func pathCost(p Points, lo, hi int, opt pathOptions) float64 {
	c := 0.0
	for k := lo; k <= hi; k++ {
		r := restartsFor(p, k, opt.Restarts, opt.Cheap)
		if opt.Init != nil {
			r += len(opt.Init(k))
		}
		c += restartCost(p.Len(), k, p.D, r) + sweepCost(p.Len(), k, p.D)
	}
	return c
}

// lloydAll returns Lloyd's result from each start (warms[i], when there and not nil, describing
// start i), in order. Starts after the first run on goroutines of their own when pool has a free
// slot at that moment (never waiting for one), the rest on the caller's goroutine, so the results
// do not depend on how many ran in parallel.
func lloydAll(p Points, inits [][]float64, warms []*kmeans.Warm, o kmeans.LloydOptions, pool *pool) []Fit {
	out := make([]Fit, len(inits))
	run := func(i int) Fit {
		o := o
		if i < len(warms) {
			o.Warm = warms[i]
		}
		return kmeans.Lloyd(p, inits[i], o)
	}
	inline := make([]bool, len(inits))
	var wg sync.WaitGroup
	for i := range inits {
		if i == 0 || pool == nil || !pool.tryAcquire() {
			inline[i] = true
			continue
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			defer pool.release()
			out[i] = run(i)
		}()
	}
	for i, in := range inline {
		if in {
			out[i] = run(i)
		}
	}
	wg.Wait()
	return out
}
