package criteria

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/stat"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// farMADs is the rule for a far row: farther from its nearest centre than the median distance of
// its cluster plus farMADs median absolute deviations of those distances (the median/MAD outlier
// rule is common practice in robust statistics; 5 rather than the usual 3 so that only rows well
// outside their cluster count: about 0.7% of a one-dimensional normal, almost none of a normal in
// two or more dimensions).
const farMADs = 5

// FarRows reports the share of rows far from every centre of the verdict's fit.
type FarRows struct {
	K     int     `json:"k"`     // the fit the share is measured on (the verdict's k)
	Share float64 `json:"share"` // estimated share of all rows (coreset weights)
	Rule  string  `json:"rule"`
}

// farRule is FarRows.Rule.
const farRule = "distance to the nearest centre > median + 5 MAD of the distances in its cluster"

// FarShare returns the weighted share of the points of p whose distance to their centre (labels,
// centres of k clusters) is beyond the median plus farMADs median absolute deviations of their
// cluster's distances (weighted median and MAD, gonum stat.Quantile).
func FarShare(p Points, labels []int32, centres []float64, k int) float64 {
	n := p.Len()
	dist := make([][]float64, k)
	wts := make([][]float64, k)
	for i := range n {
		j := labels[i]
		dist[j] = append(dist[j], math.Sqrt(kmeans.Dist2(p.Point(i), centres[int(j)*p.D:(int(j)+1)*p.D])))
		wts[j] = append(wts[j], p.Weight(i))
	}
	far, total := 0.0, 0.0
	for j := range k {
		d, w := dist[j], wts[j]
		if len(d) == 0 {
			continue
		}
		med := weightedMedian(d, w)
		dev := make([]float64, len(d))
		for i, v := range d {
			dev[i] = math.Abs(v - med)
		}
		mad := weightedMedian(dev, w)
		for i, v := range d {
			total += w[i]
			if v > med+farMADs*mad && mad > 0 {
				far += w[i]
			}
		}
	}
	if !(total > 0) {
		return 0
	}
	return far / total
}

// weightedMedian returns the weighted median of v (gonum stat.Quantile, empirical).
func weightedMedian(v, w []float64) float64 {
	idx := make([]int, len(v))
	for i := range idx {
		idx[i] = i
	}
	slices.SortFunc(idx, func(a, b int) int {
		switch {
		case v[a] < v[b]:
			return -1
		case v[a] > v[b]:
			return 1
		}
		return 0
	})
	sv, sw := make([]float64, len(v)), make([]float64, len(v))
	for i, j := range idx {
		sv[i], sw[i] = v[j], w[j]
	}
	return stat.Quantile(0.5, stat.Empirical, sv, sw)
}

// farRows measures FarShare on the coreset fit at the verdict's k.
func farRows(core Points, res *Result) FarRows {
	out := FarRows{K: res.Verdict.K, Rule: farRule}
	i := res.Verdict.K - res.Options.MinK
	if i < 0 || i >= len(res.Fits) || len(res.Fits[i].Labels) != core.Len() {
		return out
	}
	f := res.Fits[i]
	out.Share = FarShare(core, f.Labels, f.Centres, res.Verdict.K)
	return out
}
