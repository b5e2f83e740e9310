package criteria

import (
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/mat"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// splitThreshold is the prediction strength a k must keep to be called stable: Tibshirani &
// Walther (2005), "Cluster validation by prediction strength", JCGS 14(3):511-528, suggest choosing
// the largest k whose prediction strength is at least 0.8 to 0.9 (as summarised in
// the developers' methods notes (METHODS.md, kept beside the repository) section 8); we take 0.8, the low end, because our halves are small
// samples and the minimum over clusters is noisy for small clusters.
const splitThreshold = 0.8

// splitHalfMax caps the points in each half: two k-means fits per k on at most this many points
// keep the criterion a small share of Evaluate's time.
const splitHalfMax = 1500

// PredictionStrength returns the prediction strength of k clusters for a test half whose own
// k-means labels are test and whose labels by the nearest training-half centre are train:
//
//	ps(k) = min_j 1/(n_j (n_j - 1)) sum_{i != i' in test cluster j} 1[train_i = train_i']
//
// (Tibshirani & Walther 2005, eq. 2.1). Test clusters with fewer than 2 points are skipped; ps is 1
// when every test cluster is skipped. test and train must have the same length.
func PredictionStrength(test, train []int32, k int) float64 {
	if len(test) != len(train) {
		panic("criteria: PredictionStrength: label lengths differ")
	}
	co := make([]float64, k*k) // co[j*k+l]: test cluster j, training label l
	size := make([]float64, k)
	for i, j := range test {
		co[int(j)*k+int(train[i])]++
		size[j]++
	}
	ps := 1.0
	for j := range k {
		n := size[j]
		if n < 2 {
			continue
		}
		same := 0.0
		for l := range k {
			c := co[j*k+l]
			same += c * (c - 1)
		}
		ps = min(ps, same/(n*(n-1)))
	}
	return ps
}

// splitHalves returns two disjoint seeded halves of at most splitHalfMax points each from pts.
func splitHalves(pts Points, rng *rand.Rand) (a, b Points) {
	n := pts.Len()
	perm := rng.Perm(n)
	h := min(n/2, splitHalfMax)
	return pointsAt(pts, perm[:h]), pointsAt(pts, perm[h:2*h])
}

// splitAgreement returns the prediction strength of k for the halves a and b, averaged over both
// roles (a trains and b is tested, then the reverse), with restarts k-means++ seedings per fit.
// It is NaN when a half has fewer than 2k points.
func splitAgreement(a, b Points, k, restarts int, rng *rand.Rand) float64 {
	if k == 1 {
		return 1
	}
	if a.Len() < 2*k || b.Len() < 2*k {
		return math.NaN()
	}
	fa := kmeans.Fit(a, k, kmeans.FitOptions{Restarts: restarts, Rand: rng})
	fb := kmeans.Fit(b, k, kmeans.FitOptions{Restarts: restarts, Rand: rng})
	one := func(test Points, testFit, trainFit Fit) float64 {
		lab := make([]int32, test.Len())
		dist := make([]float64, test.Len())
		kmeans.Assign(test.X, test.D, trainFit.Centres, lab, dist)
		return PredictionStrength(testFit.Labels, lab, k)
	}
	return (one(b, fb, fa) + one(a, fa, fb)) / 2
}

// splitVote returns split_agreement's k and whether any k was scored. Whether the rows hold
// several groups is decided on the whitened halves: the largest valid k whose SplitAgreement is at
// least splitThreshold (k = 1 always qualifies). If that is 1, so is the vote. Otherwise the k is
// the largest k >= 2 whose SplitAgreementPlain (the same halves in the rows' own scale) is at
// least splitThreshold, or the whitened k when none is: whitening makes a single stretched cloud
// round, which the "one group" question needs, but it also blows the directions that hold no
// cluster up to the size of those that do, where two halves' fits at the right k then disagree
// (DEVELOPERS.md, issue 12, fifth and sixth rounds).
func splitVote(per []Scores) (int, bool) {
	best, ok := 0, false
	for _, s := range per {
		if s.K == 1 || (s.Valid && s.SplitAgreement >= splitThreshold) {
			best, ok = s.K, true
		}
	}
	if !ok || best == 1 {
		return best, ok
	}
	plain := 0
	for _, s := range per {
		if s.K >= 2 && s.Valid && s.SplitAgreementPlain >= splitThreshold {
			plain = s.K
		}
	}
	if plain > 0 {
		return plain, true
	}
	return best, true
}

// whiten returns the points of p mapped by Cov^(-1/2) (gonum mat.EigenSym; eigenvalues below
// 1e-9 times the largest are left unscaled), so that the rows have unit covariance in every
// direction. A single correlated cluster becomes a round one, whose halves no longer agree on
// any split; separate clusters stay separate (the map is linear and invertible). It returns p
// itself when the covariance cannot be decomposed.
func whiten(p Points, cov []float64) Points {
	d := p.D
	var es mat.EigenSym
	if len(cov) != d*d || !es.Factorize(mat.NewSymDense(d, slices.Clone(cov)), true) {
		return p
	}
	vals := es.Values(nil)
	var v mat.Dense
	es.VectorsTo(&v)
	top := slices.Max(vals)
	if !(top > 0) {
		return p
	}
	m := mat.NewDense(d, d, nil) // V diag(1/sqrt(lambda)) V^T
	for a := range d {
		for b := range d {
			s := 0.0
			for t, l := range vals {
				f := 1.0
				if l > 1e-9*top {
					f = 1 / math.Sqrt(l)
				}
				s += v.At(a, t) * f * v.At(b, t)
			}
			m.Set(a, b, s)
		}
	}
	out := Points{X: make([]float64, len(p.X)), D: d}
	for i := range p.Len() {
		x := p.Point(i)
		for a := range d {
			s := 0.0
			for b, xb := range x {
				s += m.At(a, b) * xb
			}
			out.X[i*d+a] = s
		}
	}
	return out
}
