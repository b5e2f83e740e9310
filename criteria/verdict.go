package criteria

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// pick returns the k (from per) with the best finite value of f among valid k >= lo, the largest
// when maximise is true; ties keep the smaller k. ok is false when no value is finite.
func pick(per []Scores, lo int, maximise bool, f func(Scores) float64) (k int, v float64, ok bool) {
	for _, s := range per {
		if !s.Valid || s.K < lo {
			continue
		}
		x := f(s)
		if math.IsNaN(x) || math.IsInf(x, 0) {
			continue
		}
		if !ok || (maximise && x > v) || (!maximise && x < v) {
			k, v, ok = s.K, x, true
		}
	}
	return k, v, ok
}

// votes turns the per-k scores into one vote per criterion (CriterionNames order).
func votes(per []Scores, wardK int, opt Options) []Vote {
	var out []Vote
	add := func(name string, k int, ok bool, note string) {
		if !ok {
			if !strings.HasPrefix(note, "no ") {
				note = "no valid k"
			}
			out = append(out, Vote{Criterion: name, Abstain: true, Note: note})
			return
		}
		if k == opt.MaxK && opt.MaxK > opt.MinK {
			note += "; at max-k, the best k may be larger"
		}
		out = append(out, Vote{Criterion: name, K: k, Note: note})
	}

	// elbow: Kneedle on WCSS over the valid k.
	var xs, ys []float64
	var ks []int
	for _, s := range per {
		if s.Valid {
			xs, ys, ks = append(xs, float64(s.K)), append(ys, s.WCSS), append(ks, s.K)
		}
	}
	diff := make([]float64, len(ys))
	if i, ok := Kneedle(xs, ys, 1, diff); ok {
		add(NameElbow, ks[i], true, "Kneedle knee of WCSS(k), S=1")
	} else {
		add(NameElbow, 0, false, "no knee in WCSS(k)")
	}
	for i, k := range ks {
		per[k-opt.MinK].Kneedle = diff[i]
	}

	k, v, ok := pick(per, 2, true, func(s Scores) float64 { return s.Silhouette })
	note := "no valid k >= 2"
	if ok {
		s := per[k-opt.MinK]
		note = fmt.Sprintf("max mean silhouette %.4f (95%% CI %.4f..%.4f)", v, s.SilhouetteLo, s.SilhouetteHi)
	}
	add(NameSilhouette, k, ok, note)
	k, v, ok = pick(per, 2, true, func(s Scores) float64 { return s.SimplifiedSilhouette })
	note = "no valid k >= 2"
	if ok {
		note = fmt.Sprintf("max simplified silhouette %.4f", v)
	}
	add(NameSimplifiedSilhouette, k, ok, note)

	for _, g := range []struct {
		name string
		f    func(Scores) (float64, float64)
	}{
		{NameGapBox, func(s Scores) (float64, float64) { return s.GapBox, s.GapBoxS }},
		{NameGapPCA, func(s Scores) (float64, float64) { return s.GapPCA, s.GapPCAS }},
	} {
		gap, sk := make([]float64, len(per)), make([]float64, len(per))
		for i, s := range per {
			gap[i], sk[i] = g.f(s)
		}
		if i := GapRule(gap, sk); i >= 0 {
			add(g.name, per[i].K, true, "smallest k with Gap(k) >= Gap(k+1) - s(k+1)")
		} else {
			add(g.name, 0, false, "no k below max-k meets Gap(k) >= Gap(k+1) - s(k+1)")
		}
	}

	k, _, ok = pick(per, 1, false, func(s Scores) float64 { return s.BICGMM })
	add(NameBICGMM, k, ok, "min BIC of a full-covariance Gaussian mixture")
	k, _, ok = pick(per, 1, false, func(s Scores) float64 { return s.AICGMM })
	add(NameAICGMM, k, ok, "min AIC of a full-covariance Gaussian mixture")
	k, _, ok = pick(per, 1, false, func(s Scores) float64 { return s.BICKMeans })
	add(NameBICKMeans, k, ok, "min spherical k-means BIC (per-dimension variance)")
	add(NameWard, wardK, wardK > 0, "largest relative jump of Ward merge cost")
	k, _, ok = pick(per, 2, true, func(s Scores) float64 { return s.CalinskiHarabasz })
	add(NameCalinskiHarabasz, k, ok, "max Calinski-Harabasz")
	k, _, ok = pick(per, 2, false, func(s Scores) float64 { return s.DaviesBouldin })
	add(NameDaviesBouldin, k, ok, "min Davies-Bouldin")
	return out
}

// canSayOne reports whether a criterion is one of those that can express "no cluster
// structure" (k = 1) in the verdict's first stage.
func canSayOne(name string) bool {
	return name == NameGapBox || name == NameGapPCA || name == NameBICGMM || name == NameBICKMeans
}

// verdictRule is Verdict.Rule for a decision over k >= 2.
const verdictRule = "k=1 if most of gap_box, gap_pca, bic_gmm, bic_kmeans say 1; else the k>=2 inside the range with most votes " +
	"(votes at max-k count only as 'k may be larger'; ties: more gap votes, then smaller k)"

// edgeRule is Verdict.Rule when the criteria peaking at MaxK outnumber every k inside the range.
const edgeRule = "most criteria are still improving at max-k: the best k may be larger; widen --max-k"

// verdict combines the votes.
//
// Stage 1: among the non-abstaining criteria able to say k = 1 (gap_box, gap_pca, bic_gmm,
// bic_kmeans), if more than half name 1 the verdict is 1 with Structure false.
//
// Stage 2: a criterion whose best k is MaxK (with more than two k in range) has found no optimum
// inside the range, only that the best k is MaxK or larger (common practice: a boundary optimum is
// inconclusive); information criteria on large samples of non-Gaussian clusters do this routinely.
// Such votes do not elect a k inside the range. The k >= 2 below MaxK with the most votes wins;
// ties go to the k with more gap_box/gap_pca votes, then to the smaller k. If the votes at MaxK
// outnumber that winner (or there is none), the verdict is MaxK with AtMaxK set, telling the
// caller to widen the range.
//
// Agreement is the share of non-abstaining criteria that named K; RunnerUp is the next most voted k
// (same tie-break), 0 if none.
func verdict(vs []Vote, opt Options) Verdict {
	voting := 0
	for _, v := range vs {
		if !v.Abstain {
			voting++
		}
	}
	edgeApplies := opt.MaxK-opt.MinK >= 2
	count := map[int]int{}
	gapCount := map[int]int{}
	edge := 0
	for _, v := range vs {
		if v.Abstain {
			continue
		}
		if edgeApplies && v.K == opt.MaxK {
			edge++
			continue
		}
		count[v.K]++
		if v.Criterion == NameGapBox || v.Criterion == NameGapPCA {
			gapCount[v.K]++
		}
	}
	var ranked []int // k >= 2 inside the range by votes, then gap votes, then smaller k
	for k := range count {
		if k >= 2 {
			ranked = append(ranked, k)
		}
	}
	slices.SortFunc(ranked, func(a, b int) int {
		if count[a] != count[b] {
			return count[b] - count[a]
		}
		if gapCount[a] != gapCount[b] {
			return gapCount[b] - gapCount[a]
		}
		return a - b
	})
	build := func(K int, structure bool, rule string, runner int) Verdict {
		out := Verdict{K: K, RunnerUp: runner, Structure: structure, Rule: rule, Agree: []string{}, Disagree: []string{}}
		for _, v := range vs {
			if v.Abstain {
				continue
			}
			if v.K == K {
				out.Agree = append(out.Agree, v.Criterion)
			} else {
				out.Disagree = append(out.Disagree, v.Criterion)
			}
		}
		if voting > 0 {
			out.Agreement = float64(len(out.Agree)) / float64(voting)
		}
		return out
	}
	if opt.MinK <= 1 {
		n1, nv := 0, 0
		for _, v := range vs {
			if v.Abstain || !canSayOne(v.Criterion) {
				continue
			}
			nv++
			if v.K == 1 {
				n1++
			}
		}
		if nv > 0 && 2*n1 > nv {
			runner := 0
			if len(ranked) > 0 {
				runner = ranked[0]
			}
			return build(1, false, fmt.Sprintf("k=1: %d of %d of gap_box, gap_pca, bic_gmm, bic_kmeans say 1 (no cluster structure)", n1, nv), runner)
		}
	}
	best := 0
	if len(ranked) > 0 {
		best = count[ranked[0]]
	}
	if edge > 0 && edge > best {
		v := build(opt.MaxK, true, edgeRule, 0)
		if len(ranked) > 0 {
			v.RunnerUp = ranked[0]
		}
		v.AtMaxK = true
		return v
	}
	if len(ranked) == 0 {
		k := max(opt.MinK, 1)
		return build(k, false, "no criterion voted for k >= 2: no cluster structure found", 0)
	}
	runner := 0
	if len(ranked) > 1 {
		runner = ranked[1]
	} else if edge > 0 {
		runner = opt.MaxK
	}
	return build(ranked[0], true, verdictRule, runner)
}
