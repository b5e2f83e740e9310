// Package reduce maps a wide summary to fewer dimensions before the criteria run, by a seeded
// Gaussian random projection.
//
// The map is y = x·R with R a d×m matrix of independent N(0, 1/m) entries drawn from the seed.
// Makarychev, Makarychev and Razenshteyn (2019, "Performance of Johnson–Lindenstrauss transform
// for k-means and k-medians clustering", STOC) show that such a map to m = O(log(k/ε)/ε²)
// dimensions keeps the k-means cost of every partition into k clusters within a factor 1 ± ε with
// high probability, so the criteria that compare partitions by their cost see the same ranking up
// to that factor. Their bound holds up to a constant the paper does not fix; [Dims] takes the
// constant as 1, and what the reduction gives up on real and generated sets is measured, not
// derived (bench/report/ACCURACY.md).
//
// Every part of the summary is mapped by the same R: the coreset, the uniform sample, the
// mini-batch seed centres and the mean exactly (the map is linear), the covariance as RᵀCR
// (exact for the projected rows), and the bounding box as the box of the projected coreset and
// sample (the projected rows' own box is not in the sketch; the gap statistic's reference box is
// therefore that of the points the criteria see). The cost is O((n + d)·d·m) for n coreset and
// sample rows; no d×d eigen decomposition is made.
package reduce

import (
	"math"
	"math/rand/v2"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
	"gonum.org/v1/gonum/mat"
)

// Epsilon is the cost distortion the default dimension is chosen for.
const Epsilon = 0.35

// Above is the width from which the estimate reduces by default: at 64 columns and fewer the
// criteria run in the data's own space.
const Above = 64

// Dims returns the dimension of the projection for candidates up to maxK: ⌈ln(maxK/ε)/ε²⌉ with
// ε = [Epsilon] (the form of Makarychev et al.'s bound with its constant taken as 1),
// never more than d.
func Dims(d, maxK int) int {
	m := int(math.Ceil(math.Log(float64(max(maxK, 2))/Epsilon) / (Epsilon * Epsilon)))
	return min(m, d)
}

// Info says what a reduction did; it is reported with the result.
type Info struct {
	Method string `json:"method"` // "random_projection"
	From   int    `json:"from"`   // the feature columns
	To     int    `json:"to"`     // the dimensions the criteria ran in
	Seed   uint64 `json:"seed"`
	// Epsilon is the cost distortion the dimension was chosen for by Dims (0 when the dimension
	// was given).
	Epsilon float64 `json:"epsilon,omitempty"`
}

// Matrix returns the d×m projection matrix of seed, row-major: entry (j, l) is N(0, 1/m).
func Matrix(d, m int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	r := make([]float64, d*m)
	s := 1 / math.Sqrt(float64(m))
	for i := range r {
		r[i] = rng.NormFloat64() * s
	}
	return r
}

// Project maps s to m dimensions with the projection of seed. It returns s itself when m ≥ s.D.
func Project(s criteria.Summary, m int, seed uint64) criteria.Summary {
	d := s.D
	if m >= d || m < 1 {
		return s
	}
	r := mat.NewDense(d, m, Matrix(d, m, seed))
	rows := func(x []float64) []float64 {
		n := len(x) / d
		if n == 0 {
			return []float64{}
		}
		out := mat.NewDense(n, m, nil)
		out.Mul(mat.NewDense(n, d, x), r)
		return out.RawMatrix().Data
	}
	out := criteria.Summary{D: m, N: s.N, Seeds: map[int][]float64{}}
	out.Mean = rows(s.Mean)
	cov := mat.NewDense(d, d, s.Cov)
	var cr, rcr mat.Dense
	cr.Mul(cov, r)
	rcr.Mul(r.T(), &cr)
	out.Cov = rcr.RawMatrix().Data
	for i := range m { // symmetric to the last bit
		for l := i + 1; l < m; l++ {
			v := (out.Cov[i*m+l] + out.Cov[l*m+i]) / 2
			out.Cov[i*m+l], out.Cov[l*m+i] = v, v
		}
	}
	out.Coreset = kmeans.Data{X: rows(s.Coreset.X), W: s.Coreset.W, D: m}
	out.Sample = kmeans.Data{X: rows(s.Sample.X), D: m}
	for k, c := range s.Seeds {
		out.Seeds[k] = rows(c)
	}
	out.Min, out.Max = make([]float64, m), make([]float64, m)
	for l := range m {
		out.Min[l], out.Max[l] = math.Inf(1), math.Inf(-1)
	}
	for _, x := range [][]float64{out.Coreset.X, out.Sample.X, out.Mean} {
		for i, v := range x {
			l := i % m
			out.Min[l] = math.Min(out.Min[l], v)
			out.Max[l] = math.Max(out.Max[l], v)
		}
	}
	return out
}
