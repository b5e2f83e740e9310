// Package reduce maps a wide summary to fewer dimensions before the criteria run.
//
// The default map is onto the summary's top principal components: y = x·V with V the d×m matrix
// of the m leading eigenvectors of the summary's covariance. Cohen, Elder, Musco, Musco and Persu
// (2015, "Dimensionality reduction for k-means clustering and low rank approximation", STOC) show
// that projecting onto the top ⌈k/ε⌉ principal components is a projection-cost-preserving sketch:
// for every partition into k clusters, the k-means cost after the map plus one constant (the
// variance left out) is within 1 ± ε of the cost before. The constant is the same for every
// partition and every k, so the criteria, which compare partitions and k by their costs, see the
// differences that matter. [PrincipalDims] takes m = ⌈maxK/ε⌉ with ε = [PrincipalEpsilon].
//
// The alternative, [Project], is a seeded Gaussian random projection, y = x·R with R of
// independent N(0, 1/m) entries. Makarychev, Makarychev and Razenshteyn (2019, "Performance of
// Johnson–Lindenstrauss transform for k-means and k-medians clustering", STOC) show it keeps every
// partition's cost within 1 ± ε at m = O(log(k/ε)/ε²) ([Dims]). That is a relative bound on the
// whole cost, noise included: on clusters a few standard deviations apart in hundreds of columns,
// the between-cluster part of the cost is a few percent of the whole and the projection's noise
// (each output coordinate sums d input coordinates' noise) hides it; the principal components keep
// it (measured in DEVELOPERS.md, "Wide inputs").
//
// Every part of the summary is mapped by the same matrix: the coreset, the uniform sample, the
// mini-batch seed centres and the mean exactly (the map is linear), the covariance as MᵀCM (exact
// for the mapped rows), and the bounding box as the box of the mapped coreset and sample (the
// mapped rows' own box is not in the sketch; the gap statistic's reference box is therefore that
// of the points the criteria see). The cost is one d×d symmetric eigen decomposition (gonum) for
// the principal components, and O((n + d)·d·m) for n coreset and sample rows.
package reduce

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
	"gonum.org/v1/gonum/mat"
)

// Epsilon is the cost distortion the random projection's dimension ([Dims]) is chosen for.
const Epsilon = 0.35

// PrincipalEpsilon is the cost distortion the principal components' dimension ([PrincipalDims])
// is chosen for.
const PrincipalEpsilon = 0.5

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

// PrincipalDims returns the number of principal components kept for candidates up to maxK:
// ⌈maxK/ε⌉ with ε = [PrincipalEpsilon] (Cohen et al.'s bound), never more than d.
func PrincipalDims(d, maxK int) int {
	return min(d, int(math.Ceil(float64(max(maxK, 2))/PrincipalEpsilon)))
}

// The methods an Info names.
const (
	MethodPrincipal = "principal_components"
	MethodRandom    = "random_projection"
)

// Info says what a reduction did; it is reported with the result.
type Info struct {
	Method string `json:"method"` // MethodPrincipal or MethodRandom
	From   int    `json:"from"`   // the feature columns
	To     int    `json:"to"`     // the dimensions the criteria ran in
	Seed   uint64 `json:"seed"`   // the random projection's seed (0 for principal components)
	// Epsilon is the cost distortion the dimension was chosen for (PrincipalDims; 0 when the
	// dimension was given).
	Epsilon float64 `json:"epsilon"`
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

// Project maps s to m dimensions with the random projection of seed. It returns s itself when
// m ≥ s.D.
func Project(s criteria.Summary, m int, seed uint64) criteria.Summary {
	if m >= s.D || m < 1 {
		return s
	}
	return apply(s, mat.NewDense(s.D, m, Matrix(s.D, m, seed)))
}

// Components returns the d×m matrix whose columns are the m leading eigenvectors of the d×d
// covariance cov (row-major), largest eigenvalue first, each with its largest entry positive so
// the result does not depend on the solver's choice of sign.
//
// A covariance is symmetric positive semi-definite, so its right singular vectors are its
// eigenvectors and its singular values its eigenvalues, in the same descending order. The
// singular value decomposition asking for V alone is used for speed: at 512 columns it took
// 0.26 s against the symmetric eigen decomposition's 1.7 s (gonum's QL iteration turns the
// eigenvector matrix by columns, across rows of a row-major matrix; the bidiagonal iteration for
// V turns rows), with the same vectors to twelve digits (DEVELOPERS.md, "Criteria stage, round 7").
func Components(cov []float64, d, m int) (*mat.Dense, error) {
	var svd mat.SVD
	if !svd.Factorize(mat.NewDense(d, d, slices.Clone(cov)), mat.SVDThinV) {
		return nil, errors.New("reduce: the covariance's singular value decomposition did not converge")
	}
	var vecs mat.Dense
	svd.VTo(&vecs)
	v := mat.NewDense(d, m, nil)
	for l := range m { // the singular values come in descending order
		big, sign := 0.0, 1.0
		for j := range d {
			if a := math.Abs(vecs.At(j, l)); a > big {
				big, sign = a, math.Copysign(1, vecs.At(j, l))
			}
		}
		for j := range d {
			v.Set(j, l, sign*vecs.At(j, l))
		}
	}
	return v, nil
}

// Principal maps s onto its m leading principal components (the eigenvectors of s.Cov). It
// returns s itself when m ≥ s.D.
func Principal(s criteria.Summary, m int) (criteria.Summary, error) {
	if m >= s.D || m < 1 {
		return s, nil
	}
	v, err := Components(s.Cov, s.D, m)
	if err != nil {
		return s, err
	}
	return apply(s, v), nil
}

// apply maps every part of s by the d×m matrix r.
func apply(s criteria.Summary, r *mat.Dense) criteria.Summary {
	d, m := r.Dims()
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
