package criteria

import (
	"math"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// Merge is one step of an agglomerative clustering. Clusters are numbered as in SciPy's linkage
// matrix: leaves 0..m-1, and the cluster formed by merge t is m+t.
type Merge struct {
	A    int     `json:"a"`
	B    int     `json:"b"`
	Cost float64 `json:"cost"` // increase in WCSS caused by the merge
	Size float64 `json:"size"` // total weight of the merged cluster
	K    int     `json:"k"`    // number of clusters after the merge
}

// Ward summarises the Ward linkage Evaluate ran for the report.
type Ward struct {
	Leaves int     `json:"leaves"` // weighted points agglomerated
	Source string  `json:"source"` // "coreset" or "k-means centroids (k=…)"
	Base   float64 `json:"base"`   // WCSS of the leaves themselves on the coreset (0 for the coreset)
	Merges []Merge `json:"merges"` // the last merges (at most 2*MaxK), in merge order
}

// WardLinkage agglomerates the weighted points of p by Ward's minimum-variance method (Ward 1963,
// "Hierarchical grouping to optimize an objective function", JASA 58:236-244). The cost of merging
// clusters A and B is the exact increase of the within-cluster sum of squares,
//
//	Delta(A, B) = n_A n_B / (n_A + n_B) ||c_A - c_B||^2   (n = total weight, c = weighted mean),
//
// updated after each merge by the Lance–Williams recurrence (Lance & Williams 1967)
//
//	Delta(A u B, C) = [(n_A + n_C) Delta(A, C) + (n_B + n_C) Delta(B, C) - n_C Delta(A, B)] / (n_A + n_B + n_C).
//
// SciPy's linkage(method="ward") reports heights sqrt(2 Delta) for the same merges. Ties are broken
// by the lowest (row, column) pair. Zero-weight points are left out. It returns m-1 merges for m
// positive-weight points, in merge order; O(m^2) memory and O(m^3) time.
func WardLinkage(p Points) []Merge {
	var idx []int
	for i := 0; i < p.Len(); i++ {
		if p.Weight(i) > 0 {
			idx = append(idx, i)
		}
	}
	m := len(idx)
	if m < 2 {
		return nil
	}
	dist := make([]float64, m*m)
	size := make([]float64, m)
	id := make([]int, m) // current cluster id of slot
	alive := make([]bool, m)
	for a, i := range idx {
		size[a] = p.Weight(i)
		id[a] = a
		alive[a] = true
	}
	for a := 0; a < m; a++ {
		for b := a + 1; b < m; b++ {
			na, nb := size[a], size[b]
			v := na * nb / (na + nb) * kmeans.Dist2(p.Point(idx[a]), p.Point(idx[b]))
			dist[a*m+b], dist[b*m+a] = v, v
		}
	}
	merges := make([]Merge, 0, m-1)
	for t := 0; t < m-1; t++ {
		ba, bb := -1, -1
		best := math.Inf(1)
		for a := 0; a < m; a++ {
			if !alive[a] {
				continue
			}
			row := dist[a*m : a*m+m]
			for b := a + 1; b < m; b++ {
				if alive[b] && row[b] < best {
					best, ba, bb = row[b], a, b
				}
			}
		}
		na, nb := size[ba], size[bb]
		for c := 0; c < m; c++ {
			if !alive[c] || c == ba || c == bb {
				continue
			}
			nc := size[c]
			v := ((na+nc)*dist[ba*m+c] + (nb+nc)*dist[bb*m+c] - nc*best) / (na + nb + nc)
			dist[ba*m+c], dist[c*m+ba] = v, v
		}
		lo, hi := id[ba], id[bb]
		if lo > hi {
			lo, hi = hi, lo
		}
		merges = append(merges, Merge{A: lo, B: hi, Cost: best, Size: na + nb, K: m - 1 - t})
		size[ba] = na + nb
		id[ba] = m + t
		alive[bb] = false
	}
	return merges
}

// wardVote picks k from merge costs: H(k) is the cost of the merge that leaves k-1 clusters, and
// the chosen k maximises the relative jump (H(k) - H(k+1)) / H(k+1) over lo <= k <= hi (k >= 2,
// H(k+1) > 0). It returns 0 when no k qualifies, and the per-k heights and jumps (NaN if undefined).
func wardVote(merges []Merge, lo, hi int) (best int, height, jump []float64) {
	m := len(merges) + 1
	H := func(k int) float64 {
		if k < 2 || k > m {
			return math.NaN()
		}
		return merges[m-k].Cost
	}
	height = make([]float64, hi-lo+1)
	jump = make([]float64, hi-lo+1)
	bj := math.Inf(-1)
	for k := lo; k <= hi; k++ {
		height[k-lo] = H(k)
		jump[k-lo] = math.NaN()
		if k < 2 {
			continue
		}
		h, h1 := H(k), H(k+1)
		if math.IsNaN(h) || math.IsNaN(h1) || !(h1 > 0) {
			continue
		}
		j := (h - h1) / h1
		jump[k-lo] = j
		if j > bj {
			bj, best = j, k
		}
	}
	return best, height, jump
}
