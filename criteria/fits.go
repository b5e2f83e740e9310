package criteria

import (
	"math"
	"math/rand/v2"
	"sync"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// pathOptions controls fitPath.
type pathOptions struct {
	Restarts int                     // k-means++ seedings per k (at least one when init gives none)
	Lloyd    kmeans.LloydOptions     // Lloyd settings of every fit
	Init     func(k int) [][]float64 // extra initial centres per k (may be nil)
	Rand     func(k int) *rand.Rand  // random stream per k
	Workers  int                     // goroutines for the per-k restarts (<= 1: sequential)
	Stop     func() bool             // reports cancellation (may be nil)
}

// fitPath returns a k-means fit for every k in lo..hi (index k - lo). For each k it keeps the
// cheapest of:
//   - Lloyd from each of opt.Init(k) and from opt.Restarts greedy k-means++ seedings (kmeans.Fit);
//   - upward sweep (k ascending): Lloyd from the kept k-1 centres plus one point drawn with
//     probability proportional to w D^2 (the greedy k-means++ step: 2 + ln k draws, the one that
//     lowers the potential most);
//   - downward sweep (k descending): Lloyd from the kept k+1 centres with the pair whose merge
//     raises the cost least (Ward's cost w_a w_b / (w_a + w_b) ||c_a - c_b||^2) merged into their
//     weighted mean.
//
// The sweeps carry a good solution at one k to its neighbours, where independent restarts often
// land in a local optimum (two centres in one cluster, one centre across two). The result does not
// depend on opt.Workers.
func fitPath(p kmeans.Data, lo, hi int, opt pathOptions) []kmeans.Result {
	n := hi - lo + 1
	fits := make([]kmeans.Result, n)
	stop := func() bool { return opt.Stop != nil && opt.Stop() }
	one := func(k int) {
		var init [][]float64
		if opt.Init != nil {
			init = opt.Init(k)
		}
		fits[k-lo] = kmeans.Fit(p, k, kmeans.FitOptions{Restarts: opt.Restarts, Init: init,
			Lloyd: opt.Lloyd, Rand: opt.Rand(k)})
	}
	if opt.Workers <= 1 {
		for k := hi; k >= lo && !stop(); k-- {
			one(k)
		}
	} else {
		jobs := make(chan int)
		var wg sync.WaitGroup
		for w := 0; w < opt.Workers; w++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for k := range jobs {
					if !stop() {
						one(k)
					}
				}
			}()
		}
		for k := hi; k >= lo; k-- {
			jobs <- k
		}
		close(jobs)
		wg.Wait()
	}
	if stop() {
		return fits
	}
	keep := func(k int, r kmeans.Result) {
		if r.Cost < fits[k-lo].Cost*(1-1e-9) {
			fits[k-lo] = r
		}
	}
	for k := max(lo, 2); k <= hi && !stop(); k++ {
		if k-1 < lo {
			continue
		}
		if init, ok := addCentre(p, fits[k-1-lo], opt.Rand(k)); ok {
			keep(k, kmeans.Lloyd(p, init, opt.Lloyd))
		}
	}
	for k := hi - 1; k >= lo && !stop(); k-- {
		if init, ok := mergeCheapest(fits[k+1-lo], p.D); ok {
			keep(k, kmeans.Lloyd(p, init, opt.Lloyd))
		}
	}
	return fits
}

// addCentre returns the centres of f plus one point of p chosen by the greedy k-means++ step, or
// false when every point coincides with a centre.
func addCentre(p kmeans.Data, f kmeans.Result, rng *rand.Rand) ([]float64, bool) {
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
	best, bestPot := -1, math.Inf(1)
	for t := 0; t < trials; t++ {
		u := rng.Float64() * tot
		idx := -1
		acc := 0.0
		for i := 0; i < m; i++ {
			v := p.Weight(i) * d2[i]
			if v <= 0 {
				continue
			}
			idx = i
			acc += v
			if u < acc {
				break
			}
		}
		if idx < 0 {
			break
		}
		x := p.Point(idx)
		pot := 0.0
		for i := 0; i < m; i++ {
			pot += p.Weight(i) * math.Min(d2[i], kmeans.Dist2(p.Point(i), x))
		}
		if pot < bestPot {
			best, bestPot = idx, pot
		}
	}
	if best < 0 {
		return nil, false
	}
	c := make([]float64, 0, len(f.Centres)+d)
	c = append(c, f.Centres...)
	return append(c, p.Point(best)...), true
}

// mergeCheapest returns the k-1 centres of f after merging the pair with the smallest Ward cost,
// or false when f has fewer than two centres.
func mergeCheapest(f kmeans.Result, d int) ([]float64, bool) {
	k := f.K
	if k < 2 || len(f.Sizes) != k {
		return nil, false
	}
	ba, bb, bc := -1, -1, math.Inf(1)
	for a := 0; a < k; a++ {
		for b := a + 1; b < k; b++ {
			wa, wb := f.Sizes[a], f.Sizes[b]
			var c float64
			if wa+wb > 0 {
				c = wa * wb / (wa + wb) * kmeans.Dist2(f.Centres[a*d:a*d+d], f.Centres[b*d:b*d+d])
			}
			if c < bc {
				ba, bb, bc = a, b, c
			}
		}
	}
	if ba < 0 {
		return nil, false
	}
	out := make([]float64, 0, (k-1)*d)
	for j := 0; j < k; j++ {
		switch j {
		case ba:
			wa, wb := f.Sizes[ba], f.Sizes[bb]
			for t := 0; t < d; t++ {
				ca, cb := f.Centres[ba*d+t], f.Centres[bb*d+t]
				if wa+wb > 0 {
					out = append(out, (wa*ca+wb*cb)/(wa+wb))
				} else {
					out = append(out, ca)
				}
			}
		case bb:
		default:
			out = append(out, f.Centres[j*d:j*d+d]...)
		}
	}
	return out, true
}
