package kmeans

import (
	"math"
	"math/rand/v2"
)

// Result is one k-means solution on a Data set.
type Result struct {
	K       int
	Centres []float64 // k*D, row-major
	Labels  []int32   // nearest centre per point of the fitted Data
	Sizes   []float64 // total weight per cluster
	Cost    float64   // weighted sum of squared distances to the assigned centre (WCSS on p)
	Iters   int       // Lloyd iterations run
}

// LloydOptions controls Lloyd iterations. Zero values mean defaults.
type LloydOptions struct {
	MaxIter int     // default 100
	Tol     float64 // stop when the relative cost decrease is <= Tol; default 1e-7
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
// centre to the weighted mean of its points, until the relative decrease of the weighted cost
// is <= opt.Tol or opt.MaxIter iterations have run. The returned Labels are the nearest centres of
// the returned Centres and Cost is recomputed exactly as sum w ||x - c||^2 (not in the dot form).
//
// Empty clusters: after each assignment a cluster with no weight is re-seeded with the point
// farthest (largest squared distance) from its current centre among points not yet used for
// re-seeding; if every point is at distance 0 (fewer distinct points than k) the centre is left
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
	c := append([]float64(nil), init...)
	res := Result{K: k, Centres: c, Labels: make([]int32, n), Sizes: make([]float64, k)}
	if n == 0 {
		return res
	}
	var a Assigner
	dist2 := make([]float64, n)
	sums := make([]float64, k*d)
	prev := math.Inf(1)
	for it := 1; it <= opt.MaxIter; it++ {
		res.Iters = it
		a.Assign(p.X, d, c, res.Labels, dist2)
		cost := 0.0
		for i := 0; i < n; i++ {
			cost += p.Weight(i) * dist2[i]
		}
		reseedEmpty(p, res.Labels, dist2, res.Sizes, k)
		update(p, res.Labels, c, sums, res.Sizes)
		if cost == 0 || (!math.IsInf(prev, 1) && prev-cost <= opt.Tol*prev) {
			break
		}
		prev = cost
	}
	a.Assign(p.X, d, c, res.Labels, nil)
	res.Cost = exactCost(p, c, res.Labels, res.Sizes)
	return res
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

// update moves each non-empty centre to the weighted mean of its points.
func update(p Data, labels []int32, c, sums, sizes []float64) {
	d := p.D
	for i := range sums {
		sums[i] = 0
	}
	for j := range sizes {
		sizes[j] = 0
	}
	for i, l := range labels {
		w := p.Weight(i)
		x := p.Point(i)
		s := sums[int(l)*d : int(l)*d+d]
		for t, v := range x {
			s[t] += w * v
		}
		sizes[l] += w
	}
	for j, sz := range sizes {
		if sz > 0 {
			for t := 0; t < d; t++ {
				c[j*d+t] = sums[j*d+t] / sz
			}
		}
	}
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
	var best Result
	have := false
	try := func(init []float64) {
		r := Lloyd(p, init, opt.Lloyd)
		if !have || r.Cost < best.Cost {
			best, have = r, true
		}
	}
	for _, init := range opt.Init {
		if len(init) == k*p.D {
			try(init)
		}
	}
	restarts := opt.Restarts
	if restarts <= 0 && !have {
		restarts = 1
	}
	var seed []float64
	for r := 0; r < restarts; r++ {
		seed = PlusPlus(p, k, rng, seed)
		try(seed)
	}
	return best
}
