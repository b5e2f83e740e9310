package criteria

import (
	"math"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// clusterMeans returns the weighted centroid of each cluster, its weight and the weighted total
// and within sums of squares.
func clusterMeans(p Points, labels []int32, k int) (cent, size []float64, tss, wcss float64) {
	d := p.D
	cent = make([]float64, k*d)
	size = make([]float64, k)
	mean := make([]float64, d)
	tw := 0.0
	for i, l := range labels {
		w := p.Weight(i)
		x := p.Point(i)
		for t, v := range x {
			cent[int(l)*d+t] += w * v
			mean[t] += w * v
		}
		size[l] += w
		tw += w
	}
	for j := 0; j < k; j++ {
		if size[j] > 0 {
			for t := 0; t < d; t++ {
				cent[j*d+t] /= size[j]
			}
		}
	}
	if tw > 0 {
		for t := range mean {
			mean[t] /= tw
		}
	}
	for i, l := range labels {
		w := p.Weight(i)
		x := p.Point(i)
		tss += w * kmeans.Dist2(x, mean)
		wcss += w * kmeans.Dist2(x, cent[int(l)*d:int(l)*d+d])
	}
	return cent, size, tss, wcss
}

// CalinskiHarabasz returns the Calinski–Harabasz index of the labelled weighted points
// (Calinski & Harabasz 1974, "A dendrite method for cluster analysis", Commun. Stat. 3:1-27):
//
//	CH(k) = [tr B_k / (k - 1)] / [tr W_k / (N - k)],  tr B_k = TSS - WCSS
//
// with N the total weight, centroids the weighted cluster means of the labels and k the number of
// non-empty clusters. Larger is better. NaN when k < 2, N <= k or WCSS = 0.
func CalinskiHarabasz(p Points, labels []int32, k int) float64 {
	if len(labels) != p.Len() {
		panic("criteria: CalinskiHarabasz: len(labels) != number of points")
	}
	_, size, tss, wcss := clusterMeans(p, labels, k)
	ke, n := 0, 0.0
	for _, s := range size {
		if s > 0 {
			ke++
		}
		n += s
	}
	if ke < 2 || n <= float64(ke) || !(wcss > 0) {
		return math.NaN()
	}
	return ((tss - wcss) / float64(ke-1)) / (wcss / (n - float64(ke)))
}

// DaviesBouldin returns the Davies–Bouldin index of the labelled weighted points (Davies & Bouldin
// 1979, "A cluster separation measure", IEEE TPAMI 1:224-227):
//
//	DB = (1/k) sum_i max_{j != i} (S_i + S_j) / ||c_i - c_j||
//
// with c_i the weighted cluster mean and S_i the weighted mean Euclidean distance of cluster i's
// points to c_i, over the k non-empty clusters. Smaller is better. Pairs of coincident centroids
// are skipped; NaN when k < 2, every S_i is 0 or every centroid coincides.
func DaviesBouldin(p Points, labels []int32, k int) float64 {
	if len(labels) != p.Len() {
		panic("criteria: DaviesBouldin: len(labels) != number of points")
	}
	d := p.D
	cent, size, _, _ := clusterMeans(p, labels, k)
	S := make([]float64, k)
	for i, l := range labels {
		S[l] += p.Weight(i) * math.Sqrt(kmeans.Dist2(p.Point(i), cent[int(l)*d:int(l)*d+d]))
	}
	var idx []int
	anyS := false
	for j := 0; j < k; j++ {
		if size[j] > 0 {
			S[j] /= size[j]
			idx = append(idx, j)
			if S[j] > 0 {
				anyS = true
			}
		}
	}
	if len(idx) < 2 || !anyS {
		return math.NaN()
	}
	tot := 0.0
	anyPair := false
	for _, i := range idx {
		worst := 0.0
		for _, j := range idx {
			if i == j {
				continue
			}
			m := math.Sqrt(kmeans.Dist2(cent[i*d:i*d+d], cent[j*d:j*d+d]))
			if m == 0 {
				continue
			}
			anyPair = true
			worst = math.Max(worst, (S[i]+S[j])/m)
		}
		tot += worst
	}
	if !anyPair {
		return math.NaN()
	}
	return tot / float64(len(idx))
}

// BICKMeansParams is the parameter count of BICKMeans' model: k-1 mixing shares, k·dim centre
// coordinates and one shared variance.
func BICKMeansParams(k, dim int) int { return k - 1 + k*dim + 1 }

// BICKMeans returns the dimension-consistent spherical k-means BIC, in the "lower is better" sign
// convention (-2 l + p ln R). It follows X-means (Pelleg & Moore 2000, "X-means: extending
// K-means with efficient estimation of the number of clusters", ICML) with one pooled variance per
// dimension instead of X-means' sigma^2 summed over the M dimensions:
//
//	sigma_d^2 = WCSS / (M (R - K))
//	l = sum_n R_n ln(R_n / R) - (R M / 2) ln(2 pi sigma_d^2) - M (R - K) / 2
//	p = (K - 1) + M K + 1
//
// R is the number of rows, R_n the cluster sizes (summing to R), M the dimension. NaN when
// WCSS <= 0, R <= K or a cluster is empty.
func BICKMeans(sizes []float64, wcss float64, dim int) float64 {
	K := len(sizes)
	R := 0.0
	for _, s := range sizes {
		R += s
	}
	M := float64(dim)
	if !(wcss > 0) || R <= float64(K) {
		return math.NaN()
	}
	l := 0.0
	for _, s := range sizes {
		if !(s > 0) {
			return math.NaN()
		}
		l += s * math.Log(s/R)
	}
	sig2 := wcss / (M * (R - float64(K)))
	l += -(R*M/2)*math.Log(2*math.Pi*sig2) - M*(R-float64(K))/2
	return -2*l + float64(BICKMeansParams(K, dim))*math.Log(R)
}
