package criteria

import (
	"math"
	"math/rand/v2"
	"sort"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// silhouetteOf returns s(i) for point i of p (Rousseeuw 1987):
//
//	a(i) = sum_{j in C(i), j != i} w_j ||x_i - x_j|| / sum_{j in C(i), j != i} w_j
//	b(i) = min over non-empty clusters C != C(i) of sum_{j in C} w_j ||x_i - x_j|| / sum_{j in C} w_j
//	s(i) = (b(i) - a(i)) / max(a(i), b(i))
//
// Singleton convention (Rousseeuw 1987): when no other point with positive weight shares the
// cluster of i, s(i) = 0; s(i) = 0 also when a(i) = b(i) = 0. sum and wt are scratch of length k.
func silhouetteOf(p kmeans.Data, labels []int32, i int, sum, wt []float64) float64 {
	for j := range sum {
		sum[j], wt[j] = 0, 0
	}
	xi := p.Point(i)
	n, d := p.Len(), p.D
	labels = labels[:n]
	var ws []float64
	if p.W != nil {
		ws = p.W[:n]
	}
	add := func(j int, dist2 float64) {
		if j == i {
			return
		}
		w := 1.0
		if ws != nil {
			w = ws[j]
			if w == 0 {
				return
			}
		}
		l := labels[j]
		sum[l] += w * math.Sqrt(dist2)
		wt[l] += w
	}
	j := 0
	for ; j+3 < n; j += 4 {
		x0 := p.X[j*d : j*d+d : j*d+d]
		x1 := p.X[(j+1)*d : (j+1)*d+d : (j+1)*d+d]
		x2 := p.X[(j+2)*d : (j+2)*d+d : (j+2)*d+d]
		x3 := p.X[(j+3)*d : (j+3)*d+d : (j+3)*d+d]
		x0, x1, x2, x3 = x0[:len(xi)], x1[:len(xi)], x2[:len(xi)], x3[:len(xi)]
		var s0, s1, s2, s3 float64
		for t, v := range xi {
			e0, e1, e2, e3 := v-x0[t], v-x1[t], v-x2[t], v-x3[t]
			s0 += e0 * e0
			s1 += e1 * e1
			s2 += e2 * e2
			s3 += e3 * e3
		}
		add(j, s0)
		add(j+1, s1)
		add(j+2, s2)
		add(j+3, s3)
	}
	for ; j < n; j++ {
		add(j, kmeans.Dist2(xi, p.X[j*d:j*d+d]))
	}
	own := labels[i]
	if wt[own] == 0 {
		return 0
	}
	a := sum[own] / wt[own]
	b := math.Inf(1)
	for c := range sum {
		if int32(c) != own && wt[c] > 0 {
			b = math.Min(b, sum[c]/wt[c])
		}
	}
	if math.IsInf(b, 1) {
		return math.NaN() // only one non-empty cluster
	}
	m := math.Max(a, b)
	if m == 0 {
		return 0
	}
	return (b - a) / m
}

// SilhouetteExact returns the weighted mean silhouette sum_i w_i s(i) / sum_i w_i over every point
// of p (Rousseeuw 1987, "Silhouettes: a graphical aid to the interpretation and validation of
// cluster analysis", J. Comput. Appl. Math. 20:53-65), with s(i) as documented on
// SilhouetteAnchors. With unit weights it is the usual mean silhouette (O(n^2 d)). labels must be in
// 0..k-1. It returns NaN when fewer than 2 clusters are non-empty. It panics if len(labels) != p.Len().
func SilhouetteExact(p kmeans.Data, labels []int32, k int) float64 {
	if len(labels) != p.Len() {
		panic("criteria: SilhouetteExact: len(labels) != number of points")
	}
	sum, wt := make([]float64, k), make([]float64, k)
	tot, tw := 0.0, 0.0
	for i := 0; i < p.Len(); i++ {
		w := p.Weight(i)
		if w == 0 {
			continue
		}
		s := silhouetteOf(p, labels, i, sum, wt)
		if math.IsNaN(s) {
			return math.NaN()
		}
		tot += w * s
		tw += w
	}
	if tw == 0 {
		return math.NaN()
	}
	return tot / tw
}

// SilhouetteEstimate is a mean-silhouette estimate with its 95% confidence interval.
type SilhouetteEstimate struct {
	Mean, Lo, Hi float64 // estimate and normal-approximation 95% interval (Mean ± 1.96 SE)
	SE           float64 // standard error from the stratified variance
	Anchors      int     // anchors evaluated (points of a stratum evaluated exactly count once)
}

// minAnchorsPerCluster is the smallest number of anchors drawn from any non-empty cluster.
const minAnchorsPerCluster = 5

// SilhouetteAnchors estimates the weighted mean silhouette of p (SilhouetteExact) from about m
// anchor points stratified by cluster. Cluster c with weight W_c gets
// m_c = max(5, round(m W_c / W)) anchors drawn with replacement with probability proportional to
// weight inside the cluster; if m_c is at least the cluster's number of points, the whole cluster
// is evaluated exactly. Each anchor's s(i) is measured against every point of p (a(i) and b(i) are
// weighted means of Euclidean distances, the anchor itself excluded from its own cluster's mean;
// a singleton cluster's point has s = 0, Rousseeuw 1987). The estimate is
//
//	S = sum_c (W_c/W) mean_c(s),  Var(S) = sum_c (W_c/W)^2 var_c(s)/m_c
//
// (stratified sampling; var_c with divisor m_c - 1, 0 for exact strata), and the interval is
// S ± 1.96 sqrt(Var). Cost O(m n d). The result is NaN when fewer than 2 clusters are non-empty.
func SilhouetteAnchors(p kmeans.Data, labels []int32, k, m int, rng *rand.Rand) SilhouetteEstimate {
	nan := math.NaN()
	out := SilhouetteEstimate{Mean: nan, Lo: nan, Hi: nan, SE: nan}
	if len(labels) != p.Len() {
		panic("criteria: SilhouetteAnchors: len(labels) != number of points")
	}
	members := make([][]int, k)
	cum := make([][]float64, k)
	wc := make([]float64, k)
	for i := 0; i < p.Len(); i++ {
		w := p.Weight(i)
		if w <= 0 {
			continue
		}
		l := labels[i]
		members[l] = append(members[l], i)
		wc[l] += w
		cum[l] = append(cum[l], wc[l])
	}
	W, nonEmpty := 0.0, 0
	for c := range wc {
		W += wc[c]
		if wc[c] > 0 {
			nonEmpty++
		}
	}
	if nonEmpty < 2 {
		return out
	}
	sum, wt := make([]float64, k), make([]float64, k)
	est, variance := 0.0, 0.0
	for c := 0; c < k; c++ {
		if wc[c] == 0 {
			continue
		}
		share := wc[c] / W
		mc := int(math.Round(float64(m) * share))
		if mc < minAnchorsPerCluster {
			mc = minAnchorsPerCluster
		}
		if mc >= len(members[c]) {
			t := 0.0
			for _, i := range members[c] {
				t += p.Weight(i) * silhouetteOf(p, labels, i, sum, wt)
			}
			est += share * t / wc[c]
			out.Anchors += len(members[c])
			continue
		}
		var mean, m2 float64 // Welford
		for a := 0; a < mc; a++ {
			u := rng.Float64() * wc[c]
			j := sort.SearchFloat64s(cum[c], u)
			if j >= len(members[c]) {
				j = len(members[c]) - 1
			}
			for j < len(members[c])-1 && cum[c][j] <= u {
				j++
			}
			s := silhouetteOf(p, labels, members[c][j], sum, wt)
			delta := s - mean
			mean += delta / float64(a+1)
			m2 += delta * (s - mean)
		}
		est += share * mean
		variance += share * share * (m2 / float64(mc-1)) / float64(mc)
		out.Anchors += mc
	}
	out.Mean = est
	out.SE = math.Sqrt(variance)
	out.Lo, out.Hi = est-1.96*out.SE, est+1.96*out.SE
	return out
}

// SimplifiedSilhouette returns the weighted mean simplified (centroid-based) silhouette of p for
// the given centres (Hruschka, Campello and co-authors; reviewed in Vendramin, Campello & Hruschka
// 2010, "Relative clustering validity criteria: a comparative overview", Stat. Anal. Data Min.
// 3:209-235):
//
//	a'(i) = ||x_i - c_{l(i)}||,  b'(i) = min_{j != l(i)} ||x_i - c_j||,  s'(i) = (b' - a')/max(a', b')
//
// with l(i) the given label (normally the nearest centre) and s'(i) = 0 when a' = b' = 0. Centres
// of clusters with no weight are skipped as "other" centres. Cost O(n k d). NaN for k < 2.
func SimplifiedSilhouette(p kmeans.Data, labels []int32, centres []float64) float64 {
	d := p.D
	k := len(centres) / d
	if len(labels) != p.Len() {
		panic("criteria: SimplifiedSilhouette: len(labels) != number of points")
	}
	size := make([]float64, k)
	for i, l := range labels {
		size[l] += p.Weight(i)
	}
	nonEmpty := 0
	for _, s := range size {
		if s > 0 {
			nonEmpty++
		}
	}
	if nonEmpty < 2 {
		return math.NaN()
	}
	tot, tw := 0.0, 0.0
	for i, l := range labels {
		w := p.Weight(i)
		if w == 0 {
			continue
		}
		x := p.Point(i)
		a := math.Sqrt(kmeans.Dist2(x, centres[int(l)*d:int(l)*d+d]))
		b := math.Inf(1)
		for j := 0; j < k; j++ {
			if int32(j) == l || size[j] == 0 {
				continue
			}
			b = math.Min(b, kmeans.Dist2(x, centres[j*d:j*d+d]))
		}
		b = math.Sqrt(b)
		s := 0.0
		if m := math.Max(a, b); m > 0 {
			s = (b - a) / m
		}
		tot += w * s
		tw += w
	}
	return tot / tw
}
