package kgauge

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/sketch/reduce"
)

// Scaling is the map applied to every feature before the criteria: z = (x − Center) / Spread, or
// z = (ln x − Center) / Spread for a column marked in Logged.
type Scaling struct {
	Method Scale     `json:"method"`
	Center []float64 `json:"center"`
	Spread []float64 `json:"spread"`
	// Logged marks the columns whose logarithm is taken first: every column under --scale log,
	// the positive right-skewed ones with a near-symmetric logarithm under auto; nil when none.
	Logged []bool `json:"logged,omitempty"`
}

// logs reports whether column j is taken as its logarithm.
func (sc Scaling) logs(j int) bool { return sc.Logged != nil && sc.Logged[j] }

// scalingOf computes the scaling from the exact statistics of the whole sketch (and, for the
// logarithmic columns, from its uniform sample).
func scalingOf(sk *sketch.Sketch, method Scale) Scaling {
	m := sk.Moments()
	d := sk.Dims()
	sc := Scaling{Method: method, Center: make([]float64, d), Spread: make([]float64, d)}
	mean := m.MeanTo(nil)
	std := m.StdTo(nil)
	for j := range d {
		switch method {
		case ZScore, Auto, Log:
			sc.Center[j], sc.Spread[j] = mean[j], std[j]
		case Range:
			sc.Center[j], sc.Spread[j] = m.Min[j], m.Max[j]-m.Min[j]
			if math.IsInf(sc.Spread[j], 0) {
				// A range beyond float64 (values near ±1.8e308): half of it, so the column spans
				// [0, 2] instead of [0, 1]; every criterion is unchanged by a common factor.
				sc.Spread[j] = m.Max[j]/2 - m.Min[j]/2
			}
		default:
			sc.Center[j], sc.Spread[j] = 0, 1
		}
		if !(sc.Spread[j] > 0) || math.IsInf(sc.Spread[j], 0) {
			sc.Spread[j] = 1
		}
	}
	switch method {
	case Log:
		all := make([]bool, d)
		for j := range all {
			all[j] = true
		}
		return logColumns(sk, sc, all)
	case Auto:
		return logColumns(sk, sc, autoLogs(sk))
	}
	return sc
}

// apply maps raw rows to the scaled space. The difference is taken in raw units (as exact as it
// can be) unless it overflows (values near ±1.8e308 on both sides), when both terms are scaled
// first.
func (sc Scaling) apply(x []float64) []float64 { return sc.applyTo(make([]float64, len(x)), x) }

// applyTo is apply writing into out (len(x) values; out may be x itself) and returning it.
func (sc Scaling) applyTo(out, x []float64) []float64 {
	d := len(sc.Center)
	out = out[:len(x)]
	for i, v := range x {
		j := i % d
		if sc.logs(j) {
			v = math.Log(v)
		}
		z := (v - sc.Center[j]) / sc.Spread[j]
		if math.IsInf(z, 0) {
			z = v/sc.Spread[j] - sc.Center[j]/sc.Spread[j]
		}
		out[i] = z
	}
	return out
}

// Summarize turns a sketch into the criteria's input in the scaled space: exact moments and box,
// the sampled covariance, the coreset and uniform sample, and one set of mini-batch centres per k
// (when the sketch merged several parts, their centres are pooled with their counts as weights and
// reduced to k by weighted Lloyd from the part with the most rows).
func Summarize(sk *sketch.Sketch, method Scale) (criteria.Summary, Scaling) {
	sc := scalingOf(sk, method)
	d := sk.Dims()
	m := sk.Moments()
	cross := sk.Cross()
	s := criteria.Summary{D: d, N: float64(m.N), Seeds: map[int][]float64{}}
	s.Mean = sc.apply(m.MeanTo(nil))
	for j := range d {
		if sc.logs(j) {
			s.Mean[j] = 0 // Center is the mean of ln x (sample estimate)
		}
	}
	s.Min = sc.apply(m.Min)
	s.Max = sc.apply(m.Max)
	// The covariance in the moments' power-of-two units, divided by the spreads in the same units:
	// the same numbers as raw covariance ÷ spreads, bit for bit, without overflowing for columns
	// of magnitude 1e160 and more. When a column is taken as its logarithm, it is the uniform
	// sample's covariance in the scaled space (the pass keeps no cross-products of ln x).
	s.Cov = cross.UnitCovTo(nil)
	unit := cross.Unit
	sample := sk.Sample() // the sketch's copy, taken once
	if sc.Logged != nil {
		s.Cov = sampleCov(sc.apply(sample), d)
		unit = slices.Clone(sc.Spread)
	} else if cross.N < 2 {
		// Too few sampled rows for cross-products: fall back to the exact diagonal.
		clear(s.Cov)
		v := m.UnitVarTo(nil)
		for j := range d {
			s.Cov[j*d+j] = v[j]
		}
		unit = m.Unit
	}
	for j := range d {
		for l := range d {
			s.Cov[j*d+l] /= (sc.Spread[j] / unit[j]) * (sc.Spread[l] / unit[l])
		}
	}
	cx, cw := sk.Coreset()
	s.Coreset = kmeans.Data{X: sc.applyTo(cx, cx), W: cw, D: d} // the sketch's copies: scaled in place
	s.Sample = kmeans.Data{X: sc.applyTo(sample, sample), D: d}
	cfg := sk.Config()
	for k := cfg.MinK; k <= cfg.MaxK; k++ {
		if c := reconcile(sk.CentreSets(k), k, sc); c != nil {
			s.Seeds[k] = c
		}
	}
	return s, sc
}

// sampleCov returns the covariance (divided by n, as the sketch's cross-products are) of the n×d
// rows of z.
func sampleCov(z []float64, d int) []float64 {
	n := len(z) / d
	if n < 2 {
		return make([]float64, d*d)
	}
	var cov mat.SymDense
	stat.CovarianceMatrix(&cov, mat.NewDense(n, d, z), nil)
	out := make([]float64, d*d)
	for a := range d {
		for b := range d {
			out[a*d+b] = cov.At(a, b) * float64(n-1) / float64(n)
		}
	}
	return out
}

// ReduceWide maps the summary of an input wider than the reduction threshold onto its leading
// principal components (sketch/reduce), as opt.Reduce says, and reports what it did (nil when
// nothing). Should the covariance's eigen decomposition fail, it falls back to the seeded random
// projection and says so.
func ReduceWide(s criteria.Summary, opt Options) (criteria.Summary, *reduce.Info) {
	m, eps := reducedDims(s.D, opt)
	if m >= s.D {
		return s, nil
	}
	if out, err := reduce.Principal(s, m); err == nil {
		return out, &reduce.Info{Method: reduce.MethodPrincipal, From: s.D, To: m, Epsilon: eps}
	}
	return reduce.Project(s, m, opt.Seed), &reduce.Info{Method: reduce.MethodRandom, From: s.D, To: m, Seed: opt.Seed}
}

// reducedDims is the width ReduceWide gives the criteria of a d-column input under opt (d when
// it does not reduce), and the reduction's ε when it chose the width itself.
func reducedDims(d int, opt Options) (int, float64) {
	switch m := opt.Reduce; {
	case m < 0 || (m == 0 && d <= reduce.Above):
		return d, 0
	case m == 0:
		return reduce.PrincipalDims(d, opt.Criteria.MaxK), reduce.PrincipalEpsilon
	default:
		return min(m, d), 0
	}
}

// reconcile pools the parts' mini-batch centres for one k into k centres in the scaled space.
func reconcile(parts []sketch.CentreSet, k int, sc Scaling) []float64 {
	if len(parts) == 0 {
		return nil
	}
	best, bestRows := 0, -1.0
	var pool kmeans.Data
	pool.D = len(sc.Center)
	for i, p := range parts {
		var rows float64
		for _, c := range p.Counts {
			rows += c
		}
		if rows > bestRows {
			best, bestRows = i, rows
		}
		pool.X = append(pool.X, sc.apply(p.Centres)...)
		pool.W = append(pool.W, p.Counts...)
	}
	init := sc.apply(parts[best].Centres)
	if len(parts) == 1 {
		return init
	}
	if slices.ContainsFunc(pool.W, func(w float64) bool { return w > 0 }) {
		return kmeans.Lloyd(pool, init, kmeans.LloydOptions{}).Centres
	}
	return init
}
