package kmeans

import (
	"context"
	"math"
	"math/rand/v2"

	"github.com/kgauge/kgauge/internal/lanes"
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
	// cand[t][i] is point i's squared distance to its nearest centre with candidate t added; the
	// chosen candidate's buffer becomes d2, and d2's takes its place.
	cand := make([][]float64, trials)
	for t := range cand {
		cand[t] = make([]float64, n)
	}
	// near[i] is the centre d2[i] is measured to. A candidate x cannot bring point i closer when
	// ||x - c_near(i)|| >= 2 sqrt(d2[i]) (triangle inequality), so those points keep d2[i]
	// without measuring; the margin keeps rounding from ever skipping a point x does improve.
	near := make([]int32, n)
	toCentre := make([][]float64, trials) // toCentre[t][j] = ||x_t - c_j||^2 for candidate x_t
	for t := range toCentre {
		toCentre[t] = make([]float64, k)
	}
	idx := make([]int, trials)
	pots := make([]float64, trials)
	// rows holds the candidates' rows in groups of four (the last group padded with its last
	// candidate), for lanes.Dist2x4.
	groups := (trials + 3) / 4
	rows := make([]float64, 4*groups*d)
	var four [4]float64
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
		// The candidates are drawn from the same d2, so all of them are drawn first and then
		// measured in one sweep over the points; each potential is still summed over the points
		// in order, so the choice is that of measuring the candidates one after the other.
		tot := weightedTotal(p, d2)
		for t := range idx {
			idx[t] = drawFrom(p, d2, tot, rng)
			x := p.Point(idx[t])
			for j := 0; j < c; j++ {
				toCentre[t][j] = Dist2(x, dst[j*d:(j+1)*d])
			}
			pots[t] = 0
		}
		for r := range 4 * groups {
			copy(rows[r*d:(r+1)*d], p.Point(idx[min(r, trials-1)]))
		}
		for i := 0; i < n; i++ {
			v0 := d2[i]
			w := p.Weight(i)
			xi := p.Point(i)
			ni, lim := near[i], margin*v0
			if d < dist2x4From {
				for t, tc := range toCentre {
					v := v0
					if tc[ni] < lim {
						v = min(v0, Dist2(xi, rows[t*d:(t+1)*d]))
					}
					cand[t][i] = v
					pots[t] += w * v
				}
				continue
			}
			for g := 0; g < trials; g += 4 {
				// The candidates of the group that can bring point i closer: two or more are
				// measured together, one alone (Dist2x4 gives each Dist2's own value).
				top := min(g+4, trials)
				need, one := 0, -1
				for t := g; t < top; t++ {
					if toCentre[t][ni] < lim {
						need, one = need+1, t
					}
				}
				if need > 1 {
					lanes.Dist2x4(xi, rows[g*d:(g+4)*d], &four)
				} else if need == 1 {
					four[one-g] = Dist2(xi, rows[one*d:(one+1)*d])
				}
				for t := g; t < top; t++ {
					v := v0
					if toCentre[t][ni] < lim {
						v = min(v0, four[t-g])
					}
					cand[t][i] = v
					pots[t] += w * v
				}
			}
		}
		// The first candidate is kept whatever its potential, so that a potential that is not
		// a number (squared distances beyond float64) cannot leave no centre chosen.
		bt := 0
		for t := 1; t < trials; t++ {
			if pots[t] < pots[bt] {
				bt = t
			}
		}
		best := cand[bt]
		copy(dst[c*d:(c+1)*d], p.Point(idx[bt]))
		for i, v := range best {
			if v < d2[i] {
				near[i] = int32(c)
			}
		}
		d2, cand[bt] = best, d2
	}
	return dst
}

// dist2x4From is the width from which k-means++ measures a point against its candidates four at
// a time (lanes.Dist2x4). BenchmarkPlusPlus: at 16 columns and k = 20 it is within noise of one
// candidate at a time, at 16 columns and max-k 50 the criteria stage gains 3%, at 2 columns and
// k = 100 the seeding takes 35% longer (its distances are too short to pay for sorting the
// candidates into groups).
const dist2x4From = 8

// drawWeighted draws an index with probability proportional to w(i)*f(i) (f nil means 1).
func drawWeighted(p Data, f []float64, rng *rand.Rand) int {
	return drawFrom(p, f, weightedTotal(p, f), rng)
}

// weightedTotal returns sum_i w(i)*f(i) (f nil means 1), summed in order.
func weightedTotal(p Data, f []float64) float64 {
	tot := 0.0
	for i := range p.Len() {
		v := p.Weight(i)
		if f != nil {
			v *= f[i]
		}
		tot += v
	}
	return tot
}

// drawFrom is drawWeighted given tot = weightedTotal(p, f).
func drawFrom(p Data, f []float64, tot float64, rng *rand.Rand) int {
	n := p.Len()
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
