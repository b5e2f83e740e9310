package kmeans

import (
	"math"

	"github.com/kgauge/kgauge/internal/lanes"
)

// maxStackK is the largest number of centres whose norms Assign keeps on the stack; larger k
// allocates one scratch slice per call (use an Assigner to avoid it).
const maxStackK = 512

// Assign writes, for each point of x (row-major, d columns), the index of its nearest centre
// (centres row-major, k = len(centres)/d) into labels and the squared Euclidean distance into
// dist2; either may be nil. It uses the dot form
//
//	||x - c||^2 = ||x||^2 - 2 x.c + ||c||^2
//
// with precomputed centre norms and a register block of 2 points x 4 centres; results below 0
// (rounding) are clamped to 0. The dot form loses absolute precision of about
// 1e-16 * ||x||^2, so callers needing exact costs recompute ||x - c||^2 for the winner (Lloyd
// does). Ties go to the lower centre index. Assign does not allocate for k <= 512.
// It panics if len(x) or len(centres) is not a multiple of d or labels/dist2 are too short.
func Assign(x []float64, d int, centres []float64, labels []int32, dist2 []float64) {
	if d <= 0 || len(centres)%d != 0 || len(x)%d != 0 {
		panic("kmeans: Assign: length not a multiple of d")
	}
	k := len(centres) / d
	var buf [maxStackK]float64
	var norms []float64
	if k <= maxStackK {
		norms = buf[:k]
	} else {
		norms = make([]float64, k)
	}
	assignWith(x, d, centres, norms, labels, dist2, nil, nil)
}

// Assigner is a reusable scratch for Assign that never allocates after the first call with a
// given k and d. Where the machine has AVX2 it also keeps the centres in groups of four for
// lanes.Dots2, which forms the block's dot products four centres at once with the same sums (so
// the same labels and distances, bit for bit); the last group is filled up with copies of the
// last centre, whose lanes are not read, so that k = 1..3 and the last k mod 4 centres are
// measured in vector lanes too.
type Assigner struct {
	norms, ct, dots, pad []float64
}

// Assign is Assign with the centre norms kept in a.
func (a *Assigner) Assign(x []float64, d int, centres []float64, labels []int32, dist2 []float64) {
	if d <= 0 || len(centres)%d != 0 || len(x)%d != 0 {
		panic("kmeans: Assign: length not a multiple of d")
	}
	k := len(centres) / d
	if k == 1 && dist2 == nil && labels != nil {
		clear(labels[:len(x)/d]) // one centre: every label is 0, and no distance is asked for
		return
	}
	if cap(a.norms) < k {
		a.norms = make([]float64, k)
	}
	var ct, dots []float64
	if groups := (k + 3) / 4; lanes.Vector && k > 0 && len(x) >= 2*d {
		rows := centres
		if k%4 != 0 {
			if cap(a.pad) < 4*groups*d {
				a.pad = make([]float64, 4*groups*d)
			}
			a.pad = a.pad[:4*groups*d]
			copy(a.pad, centres)
			last := centres[(k-1)*d:]
			for r := k; r < 4*groups; r++ {
				copy(a.pad[r*d:(r+1)*d], last)
			}
			rows = a.pad
		}
		a.ct = lanes.Group(a.ct, rows, groups, d)
		if cap(a.dots) < 8*groups {
			a.dots = make([]float64, 8*groups)
		}
		ct, dots = a.ct, a.dots[:8*groups]
	}
	assignWith(x, d, centres, a.norms[:k], labels, dist2, ct, dots)
}

// assignWith is Assign with the norms' scratch, and, when ct is not nil, the first 4·g centres
// grouped (lanes.Group; g = len(dots)/8, and rows past the k-th are read by no one) and a scratch
// of 8·g for lanes.Dots2. A point's squared norm moves its distance, not its label, so it is
// summed only when dist2 is asked for.
func assignWith(x []float64, d int, centres, norms []float64, labels []int32, dist2 []float64, ct, dots []float64) {
	n := len(x) / d
	k := len(centres) / d
	if labels != nil && len(labels) < n {
		panic("kmeans: Assign: labels too short")
	}
	if dist2 != nil && len(dist2) < n {
		panic("kmeans: Assign: dist2 too short")
	}
	if n == 0 {
		return
	}
	if k == 0 {
		panic("kmeans: Assign: no centres")
	}
	for j := 0; j < k; j++ {
		c := centres[j*d : (j+1)*d]
		s := 0.0
		for _, v := range c {
			s += v * v
		}
		norms[j] = s
	}
	i := 0
	for ; i+1 < n; i += 2 {
		x0 := x[i*d : (i+1)*d : (i+1)*d]
		x1 := x[(i+1)*d : (i+2)*d : (i+2)*d]
		nx0, nx1 := 0.0, 0.0
		if dist2 != nil {
			for t := range x0 {
				nx0 += x0[t] * x0[t]
				nx1 += x1[t] * x1[t]
			}
		}
		best0, best1 := 0, 0
		bd0, bd1 := math.Inf(1), math.Inf(1)
		j := 0
		if ct != nil {
			groups := len(dots) / 8
			lanes.Dots2(x0, x1, ct, groups, dots)
			for g := range groups {
				for s := 0; s < 4 && 4*g+s < k; s++ {
					q0, q1 := norms[4*g+s]-2*dots[8*g+s], norms[4*g+s]-2*dots[8*g+4+s]
					if q0 < bd0 {
						bd0, best0 = q0, 4*g+s
					}
					if q1 < bd1 {
						bd1, best1 = q1, 4*g+s
					}
				}
			}
			j = min(4*groups, k)
		}
		for ; j+3 < k; j += 4 {
			c0 := centres[j*d : (j+1)*d : (j+1)*d]
			c1 := centres[(j+1)*d : (j+2)*d : (j+2)*d]
			c2 := centres[(j+2)*d : (j+3)*d : (j+3)*d]
			c3 := centres[(j+3)*d : (j+4)*d : (j+4)*d]
			var a00, a01, a02, a03, a10, a11, a12, a13 float64
			c0 = c0[:len(x0)]
			c1 = c1[:len(x0)]
			c2 = c2[:len(x0)]
			c3 = c3[:len(x0)]
			x1 = x1[:len(x0)]
			for t, u := range x0 {
				v := x1[t]
				e0, e1, e2, e3 := c0[t], c1[t], c2[t], c3[t]
				a00 += u * e0
				a01 += u * e1
				a02 += u * e2
				a03 += u * e3
				a10 += v * e0
				a11 += v * e1
				a12 += v * e2
				a13 += v * e3
			}
			q0 := [4]float64{norms[j] - 2*a00, norms[j+1] - 2*a01, norms[j+2] - 2*a02, norms[j+3] - 2*a03}
			q1 := [4]float64{norms[j] - 2*a10, norms[j+1] - 2*a11, norms[j+2] - 2*a12, norms[j+3] - 2*a13}
			for s := 0; s < 4; s++ {
				if q0[s] < bd0 {
					bd0, best0 = q0[s], j+s
				}
				if q1[s] < bd1 {
					bd1, best1 = q1[s], j+s
				}
			}
		}
		for ; j < k; j++ {
			c := centres[j*d : (j+1)*d : (j+1)*d]
			c = c[:len(x0)]
			x1 = x1[:len(x0)]
			var a0, a1 float64
			for t, u := range x0 {
				a0 += u * c[t]
				a1 += x1[t] * c[t]
			}
			q0, q1 := norms[j]-2*a0, norms[j]-2*a1
			if q0 < bd0 {
				bd0, best0 = q0, j
			}
			if q1 < bd1 {
				bd1, best1 = q1, j
			}
		}
		bd0 += nx0
		bd1 += nx1
		if bd0 < 0 {
			bd0 = 0
		}
		if bd1 < 0 {
			bd1 = 0
		}
		if labels != nil {
			labels[i], labels[i+1] = int32(best0), int32(best1)
		}
		if dist2 != nil {
			dist2[i], dist2[i+1] = bd0, bd1
		}
	}
	for ; i < n; i++ {
		x0 := x[i*d : (i+1)*d : (i+1)*d]
		nx := 0.0
		if dist2 != nil {
			for _, u := range x0 {
				nx += u * u
			}
		}
		best, bd := 0, 0.0
		for j := 0; j < k; j++ {
			c := centres[j*d : (j+1)*d : (j+1)*d]
			c = c[:len(x0)]
			a := 0.0
			for t, u := range x0 {
				a += u * c[t]
			}
			q := norms[j] - 2*a
			if j == 0 || q < bd {
				bd, best = q, j
			}
		}
		bd += nx
		if bd < 0 {
			bd = 0
		}
		if labels != nil {
			labels[i] = int32(best)
		}
		if dist2 != nil {
			dist2[i] = bd
		}
	}
}

// Dist2 returns the squared Euclidean distance between a and b (len(b) >= len(a)) as four
// partial sums, so the additions do not wait on each other: lanes.Dist2, one vector register on
// machines with AVX2.
func Dist2(a, b []float64) float64 { return lanes.Dist2(a, b) }
