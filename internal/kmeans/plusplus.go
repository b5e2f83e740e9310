package kmeans

import (
	"context"
	"math"
	"math/rand/v2"
)

// PlusPlus seeds k centres by weighted k-means++ (Arthur & Vassilvitskii 2007, "k-means++: the
// advantages of careful seeding"), greedy variant: at each step 2+floor(ln k) candidates are drawn
// with probability proportional to w(x) D(x)^2 and the one that lowers the potential
// sum_x w(x) D(x)^2 most is kept (common practice). The first centre is drawn proportional to w.
// When every remaining point already coincides with a centre (fewer distinct points than k), the
// remaining centres are drawn proportional to w alone and so duplicate existing centres.
// The result is written to dst (grown if needed; may be nil) and returned, k*D values.
// It is deterministic for a given rng state and panics if k < 1 or p is empty.
func PlusPlus(p Data, k int, rng *rand.Rand, dst []float64) []float64 {
	return plusPlus(nil, p, k, rng, dst)
}

// plusPlus is PlusPlus checking ctx (when not nil) every few centres; once it is done the remaining
// centres are copies of the first, so that the result keeps its shape (the caller discards it).
func plusPlus(ctx context.Context, p Data, k int, rng *rand.Rand, dst []float64) []float64 {
	p.check()
	n, d := p.Len(), p.D
	if k < 1 {
		panic("kmeans: PlusPlus: k < 1")
	}
	if n == 0 {
		panic("kmeans: PlusPlus: no points")
	}
	if cap(dst) < k*d {
		dst = make([]float64, k*d)
	}
	dst = dst[:k*d]
	first := drawWeighted(p, nil, rng)
	copy(dst[:d], p.Point(first))
	if k == 1 {
		return dst
	}
	trials := 2 + int(math.Log(float64(k)))
	d2 := make([]float64, n)
	cand := make([]float64, n)
	best := make([]float64, n)
	// near[i] is the centre d2[i] is measured to. A candidate x cannot bring point i closer when
	// ||x - c_near(i)|| >= 2 sqrt(d2[i]) (triangle inequality), so those points keep d2[i]
	// without measuring; the margin keeps rounding from ever skipping a point x does improve.
	near := make([]int32, n)
	toCentre := make([]float64, k) // ||x - c_j||^2 for the candidate x
	const margin = 4 * (1 + 1e-9)
	for i := 0; i < n; i++ {
		d2[i] = Dist2(p.Point(i), dst[:d])
	}
	for c := 1; c < k; c++ {
		if ctx != nil && c%8 == 0 && ctx.Err() != nil {
			for ; c < k; c++ {
				copy(dst[c*d:(c+1)*d], dst[:d])
			}
			break
		}
		pot := 0.0
		for i := 0; i < n; i++ {
			pot += p.Weight(i) * d2[i]
		}
		if !(pot > 0) {
			idx := drawWeighted(p, nil, rng)
			copy(dst[c*d:(c+1)*d], p.Point(idx))
			continue
		}
		bestPot := math.Inf(1)
		bestIdx := -1
		for t := 0; t < trials; t++ {
			idx := drawWeighted(p, d2, rng)
			x := p.Point(idx)
			for j := 0; j < c; j++ {
				toCentre[j] = Dist2(x, dst[j*d:(j+1)*d])
			}
			s := 0.0
			for i := 0; i < n; i++ {
				v := d2[i]
				if toCentre[near[i]] < margin*v {
					v = min(v, Dist2(p.Point(i), x))
				}
				cand[i] = v
				s += p.Weight(i) * v
			}
			// The first candidate is kept whatever its potential, so that a potential that is not
			// a number (squared distances beyond float64) cannot leave no centre chosen.
			if s < bestPot || bestIdx < 0 {
				bestPot, bestIdx = s, idx
				best, cand = cand, best
			}
		}
		copy(dst[c*d:(c+1)*d], p.Point(bestIdx))
		for i, v := range best {
			if v < d2[i] {
				near[i] = int32(c)
			}
		}
		d2, best = best, d2
	}
	return dst
}

// drawWeighted draws an index with probability proportional to w(i)*f(i) (f nil means 1).
func drawWeighted(p Data, f []float64, rng *rand.Rand) int {
	n := p.Len()
	tot := 0.0
	for i := 0; i < n; i++ {
		v := p.Weight(i)
		if f != nil {
			v *= f[i]
		}
		tot += v
	}
	if !(tot > 0) {
		return rng.IntN(n)
	}
	u := rng.Float64() * tot
	acc := 0.0
	last := -1
	for i := 0; i < n; i++ {
		v := p.Weight(i)
		if f != nil {
			v *= f[i]
		}
		if v <= 0 {
			continue
		}
		last = i
		acc += v
		if u < acc {
			return i
		}
	}
	return last
}
