package criteria

import (
	_ "embed"
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strings"
)

// NameOneMode is the one-mode check's key in Weights.Structure (it is not a per-k criterion).
const NameOneMode = "one_mode"

// NameSharedK is the key in Weights.Structure of the stage-1 voter that reads the criteria's own
// choices (SharedK).
const NameSharedK = "shared_k"

// NameMixturesAgree is the key in Weights.Choice of the stage-2 voter that reads the three
// mixture criteria together (MixturesAgree).
const NameMixturesAgree = "mixtures_agree"

// SharedKMin is how many criteria must name one k >= 3 for SharedK to say "several groups".
const SharedKMin = 4

// SharedK reports whether at least SharedKMin criteria name one and the same k >= 3 inside the
// range minK..maxK (a criterion still improving at max-k does not count). On a single cloud the
// ratio criteria (silhouette, Calinski-Harabasz, Davies-Bouldin) mostly name 2, the smallest k
// they can (common practice), and the others scatter; several of them meeting on one larger k is
// evidence of groups that the criteria able to say "one group" can miss: on many weak clusters in
// many dimensions gap's first-step rule and a full-covariance mixture with few rows per parameter
// both say one (bench/report/CALIBRATION.md).
func SharedK(vs []Vote, minK, maxK int) bool {
	edge := edgeRange(minK, maxK)
	count := map[int]int{}
	for _, v := range vs {
		if v.Abstain || v.StillImproving || v.K < 3 || (edge && v.K == maxK) {
			continue
		}
		count[v.K]++
		if count[v.K] >= SharedKMin {
			return true
		}
	}
	return false
}

// MixturesAgree returns the k >= 2 that bic_gmm, aic_gmm and icl_gmm all name inside the range
// minK..maxK (none of them abstaining or still improving at max-k), or 0. The three price the same
// mixture's likelihood (full-covariance, or spherical where the points are few for a full one at
// max-k and it has the lower BIC: mixtureFamilies) with penalties from light to heavy: AICc about two per parameter,
// BIC ln N per parameter, ICL BIC's plus twice the entropy of the soft classification. When all
// three stop at one k, the choice does not hang on how parameters and overlap are priced. On
// the benchmark grid that k was right wherever the three met (bench/report/CALIBRATION.md; 26 of
// 26 training and 29 of 29 held-out runs, 30 of 30 seed-stability runs), and in 55 of 57 runs of
// the same data sets on all their rows (DEVELOPERS.md, issue 12, ninth round), including
// elongated clusters and clusters of very unequal size where the k-means criteria split one long
// or dense cluster; on heavy tails and far outliers AIC runs on to larger k and the three part,
// so it stays silent there.
func MixturesAgree(vs []Vote, minK, maxK int) int {
	edge := edgeRange(minK, maxK)
	k := 0
	for _, name := range []string{NameBICGMM, NameAICGMM, NameICLGMM} {
		i := slices.IndexFunc(vs, func(v Vote) bool { return v.Criterion == name })
		if i < 0 {
			return 0
		}
		v := vs[i]
		if v.Abstain || v.StillImproving || v.K < 2 || (edge && v.K == maxK) || (k != 0 && v.K != k) {
			return 0
		}
		k = v.K
	}
	return k
}

// nearK is how far from k a vote may name and still count for k in stage 2 (where k is named with
// at least its weight: Decide's counts): a twentieth of k, so none below k = 20. Where groups
// number in the tens or hundreds, criteria that find them rarely stop at the same k: on Fränti's
// Birch2 (100 groups) BIC and AICc name 100 and ICL 95, while the gap statistics and the split
// agreement name 4 together and, counted one k at a time, outweighed them (DEVELOPERS.md, issue
// 15, "Criteria stage, round 5"). Up to k = 19 stage 2 counts each k alone, as the benchmark
// grid's weights were measured.
func nearK(k int) int { return k / 20 }

// near reports whether a vote for j counts for k in stage 2 (nearK).
func near(j, k int) bool { return j >= k-nearK(k) && j <= k+nearK(k) }

// unstableRatio: a verdict is unstable when another k holds at least this share of its vote
// weight. Chosen on the benchmark grid (bench/report/CALIBRATION.md): below it, seeds 1..10 gave
// the same verdict in at least 9 of 10 runs on every reference set and scenario measured.
const unstableRatio = 0.75

// lowConfidence: a k >= 2 verdict whose calibrated confidence is below this is marked unstable
// (with the runner-up as its alternative): on the grid such verdicts were right less often than not.
const lowConfidence = 0.5

// Weights are the vote weights measured on the benchmark grid (bench/report/CALIBRATION.md),
// embedded from weights.json, which `go test ./bench/ -run TestCalibrationGrid -calibrate` writes.
type Weights struct {
	Source string `json:"source"` // the command and grid that produced the weights
	// Structure weighs the voters of stage 1 (one group or several): the criteria able to say
	// k = 1, the one-mode check and shared_k (SharedK). Each weight is the log-odds of the voter being right about
	// "one group or several" on the grid, floored at 0, divided by √(1 + the shares of errors it
	// has in common with other voters) (those sharing at least 40%; bench/calibrate.go).
	Structure map[string]float64 `json:"structure"`
	// Choice weighs every criterion's k in stage 2: log(p/(1-p)) + log(m-1), floored at 0, with p
	// the share of grid runs with several groups in which it named the true k and m the number of
	// candidate k (the weighted-majority rule for independent voters over m classes), divided
	// like Structure by √(1 + the shares of wrong k it has in common with other voters). The
	// derived voter NameMixturesAgree is weighed the same way over the runs in which it speaks.
	Choice map[string]float64 `json:"choice"`
	// Calibration maps Support to the share of grid runs whose verdict was right (a logistic fit
	// on the training half, capped by the share right of the runs at that support or above;
	// bench.DeriveWeights): the confidence of a verdict is Right of the last point whose Support
	// is at most the verdict's.
	Calibration []CalPoint `json:"calibration"`
}

// CalPoint is one step of the calibration table.
type CalPoint struct {
	Support float64 `json:"support"` // lower end of the step
	Right   float64 `json:"right"`   // calibrated share right from Support on (non-decreasing)
	Runs    int     `json:"runs"`    // training runs whose support falls in the step
}

//go:embed weights.json
var weightsJSON []byte

// ParseWeights reads and checks a weights file: every name must be a criterion (or NameOneMode in
// Structure), every weight finite and non-negative, the calibration sorted by Support with Right in
// 0..1.
func ParseWeights(b []byte) (Weights, error) {
	var w Weights
	if err := json.Unmarshal(b, &w); err != nil {
		return Weights{}, fmt.Errorf("criteria: weights: %w", err)
	}
	known := CriterionNames()
	for _, m := range []struct {
		what string
		m    map[string]float64
	}{{"structure", w.Structure}, {"choice", w.Choice}} {
		if len(m.m) == 0 {
			return Weights{}, fmt.Errorf("criteria: weights: no %s weights", m.what)
		}
		for name, v := range m.m {
			derived := (m.what == "structure" && (name == NameOneMode || name == NameSharedK)) ||
				(m.what == "choice" && name == NameMixturesAgree)
			if !slices.Contains(known, name) && !derived {
				return Weights{}, fmt.Errorf("criteria: weights: unknown %s voter %q", m.what, name)
			}
			if !(v >= 0) || math.IsInf(v, 0) {
				return Weights{}, fmt.Errorf("criteria: weights: %s weight of %s is %v", m.what, name, v)
			}
		}
	}
	for i, c := range w.Calibration {
		if !(c.Right >= 0 && c.Right <= 1) || (i > 0 && !(c.Support > w.Calibration[i-1].Support)) {
			return Weights{}, fmt.Errorf("criteria: weights: calibration point %d (%v, %v) out of order or range", i, c.Support, c.Right)
		}
	}
	return w, nil
}

// DefaultWeights returns the embedded weights. It panics if they do not parse (a build error,
// caught by the package tests).
func DefaultWeights() Weights {
	w, err := ParseWeights(weightsJSON)
	if err != nil {
		panic(err)
	}
	return w
}

var defaultWeights = DefaultWeights()

// Confidence returns the calibrated confidence of a verdict with the given support (NaN without a
// calibration table).
func (w Weights) Confidence(support float64) float64 {
	if len(w.Calibration) == 0 {
		return math.NaN()
	}
	c := w.Calibration[0].Right
	for _, p := range w.Calibration {
		if p.Support <= support {
			c = p.Right
		}
	}
	return c
}

// CanSayOne reports whether a criterion takes part in stage 1 (it can name k = 1). icl_gmm can
// name k = 1 but is left out: heard in stage 1 it called single log-normal and Student t clouds
// structure on the benchmark grid (DEVELOPERS.md, issue 12, fourth round).
func CanSayOne(name string) bool {
	switch name {
	case NameGapBox, NameGapPCA, NameBICGMM, NameBICKMeans, NameSplitAgreement:
		return true
	}
	return false
}

// plain says what a criterion's choice means, without jargon, for Verdict.Why.
var plain = map[string]string{
	NameElbow:                "the spread within clusters stops falling fast there (elbow)",
	NameSilhouette:           "rows sit clearly closer to their own cluster than to the next one (silhouette)",
	NameSimplifiedSilhouette: "rows sit clearly closer to their own centre than to the next one (simplified silhouette)",
	NameGapBox:               "clusters are much tighter than in patternless data of the same extent (gap statistic)",
	NameGapPCA:               "clusters are much tighter than in patternless data of the same shape (gap statistic, rotated)",
	NameBICGMM:               "a mixture of that many bell-shaped groups explains the rows best for its size (BIC)",
	NameAICGMM:               "a mixture of that many bell-shaped groups explains the rows best (AIC)",
	NameBICKMeans:            "that many centres explain the rows best for their number (k-means BIC)",
	NameICLGMM:               "a mixture of that many bell-shaped groups explains the rows best for its size while its groups barely overlap (ICL)",
	NameWard:                 "merging any two of its groups would cost the most (Ward linkage)",
	NameCalinskiHarabasz:     "groups are farthest apart for how spread out they are (Calinski-Harabasz)",
	NameDaviesBouldin:        "groups are most compact and least alike (Davies-Bouldin)",
	NameSplitAgreement:       "two disjoint halves of the rows are grouped the same way (split agreement)",
	NameClusterModes:         "every group has a single peak, and this is the fewest groups for which that holds (cluster modes)",
	NameMixturesAgree:        "bell-shaped mixtures name it whether parameters and overlap are priced lightly or heavily (AIC, BIC and ICL agree)",
}

// Decide combines the votes and the one-mode check into a verdict with the weights w.
//
// Stage 1 (only when minK <= 1): the voters able to say "one group" (gap_box, gap_pca, bic_gmm,
// bic_kmeans, split_agreement, the one-mode check and, when w weighs it, shared_k) each say "one" or
// "several"; if the weight saying one is at least the weight saying several, K is 1 and Structure
// false (an exact tie goes to "one": a false alarm costs more than a missed split, and the verdict
// is marked unstable).
//
// Stage 2: every criterion naming a k >= 2 adds its Choice weight to that k, and so does the
// derived voter NameMixturesAgree when bic_gmm, aic_gmm and icl_gmm name one k (MixturesAgree);
// a criterion still improving at maxK (Vote.StillImproving, or a vote at maxK, with at least
// three k in range) only says "k may be larger" and adds to the edge; it says "several" in stage 1
// and is left out of Agreement unless K is maxK. The k with the most weight wins; if the edge
// outweighs all of k inside the range together, K is maxK with AtMaxK. An exact tie is resolved
// toward the smaller k and marked unstable, never toward a particular criterion.
//
// Support is the winning weight share (for k >= 2, the share of stage 1 saying "several" times the
// share of stage 2 behind K); Confidence is the calibrated Support. Unstable is set when another k
// holds at least unstableRatio of K's weight (or stage 1 was that close); Alternatives lists them.
func Decide(vs []Vote, modes ModeCheck, minK, maxK int, w Weights) Verdict {
	edgeApplies := edgeRange(minK, maxK)
	// atEdge: the vote only says "still improving at max-k" (an abstention with StillImproving, or
	// a vote at max-k from a caller that did not mark it).
	atEdge := func(v Vote) bool {
		return edgeApplies && (v.StillImproving || (!v.Abstain && v.K == maxK))
	}
	// exact is the stage-2 weight named at each k; counts(j, k) reports whether a vote for j
	// counts for k: j is k, or j is near k (nearK) and named with no more weight than k, so a k
	// gathers the votes around it only where it is the local peak of the weight.
	exact := map[int]float64{}
	counts := func(j, k int) bool { return j == k || (near(j, k) && exact[j] <= exact[k]) }
	build := func(K int, structure bool, rule string) Verdict {
		out := Verdict{K: K, Structure: structure, Rule: rule, Agree: []string{}, Disagree: []string{}, Alternatives: []int{}}
		voting := 0
		for _, v := range vs {
			// A criterion still improving at max-k found no optimum in the range: it takes part
			// only in a verdict at max-k.
			if atEdge(v) && K != maxK {
				continue
			}
			if v.Abstain && !v.StillImproving {
				continue
			}
			voting++
			if counts(v.K, K) || (v.StillImproving && K == maxK) {
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

	// Stage 2 scores, needed for the runner-up of a k = 1 verdict as well: first the weight named
	// at each k (exact), then each k's score, the weight of the votes that count for it (counts).
	edge, total2 := 0.0, 0.0
	for _, v := range vs {
		if atEdge(v) {
			wt := w.Choice[v.Criterion]
			total2 += wt
			edge += wt
			continue
		}
		if v.Abstain || v.K < 2 {
			continue
		}
		wt := w.Choice[v.Criterion]
		total2 += wt
		exact[v.K] += wt
	}
	// The derived voter: the three mixture criteria naming one k together.
	mixK := MixturesAgree(vs, minK, maxK)
	if wt := w.Choice[NameMixturesAgree]; mixK > 0 && wt > 0 {
		exact[mixK] += wt
		total2 += wt
	}
	score := make(map[int]float64, len(exact))
	ranked := make([]int, 0, len(exact))
	for k := range exact {
		for j, wt := range exact {
			if counts(j, k) {
				score[k] += wt
			}
		}
		ranked = append(ranked, k)
	}
	slices.SortFunc(ranked, func(a, b int) int {
		if score[a] != score[b] {
			if score[a] > score[b] {
				return -1
			}
			return 1
		}
		if exact[a] != exact[b] {
			if exact[a] > exact[b] {
				return -1
			}
			return 1
		}
		return a - b
	})

	share1, several := 0.0, 0.0
	if minK <= 1 {
		one := 0.0
		var oneBy, severalBy []string
		for _, v := range vs {
			if (v.Abstain && !atEdge(v)) || !CanSayOne(v.Criterion) {
				continue
			}
			if v.K == 1 && !atEdge(v) {
				one += w.Structure[v.Criterion]
				oneBy = append(oneBy, v.Criterion)
			} else {
				several += w.Structure[v.Criterion]
				severalBy = append(severalBy, v.Criterion)
			}
		}
		if modes.N > 0 {
			if modes.Modes {
				several += w.Structure[NameOneMode]
			} else {
				one += w.Structure[NameOneMode]
			}
		}
		if wt, ok := w.Structure[NameSharedK]; ok {
			if SharedK(vs, minK, maxK) {
				several += wt
				severalBy = append(severalBy, NameSharedK)
			} else {
				one += wt
			}
		}
		if one+several > 0 {
			share1 = one / (one + several)
		}
		if one+several > 0 && one >= several {
			out := build(1, false, "stage 1: the voters able to say 'one group' (gap_box, gap_pca, bic_gmm, bic_kmeans, "+
				"split_agreement, the one-mode check, shared_k) say one group by weight")
			out.Support = share1
			out.Confidence = w.Confidence(out.Support)
			if len(ranked) > 0 {
				out.RunnerUp = ranked[0]
			}
			if several >= unstableRatio*one && len(ranked) > 0 {
				out.Unstable = true
				out.Alternatives = []int{ranked[0]}
			}
			out.Why = whyOne(modes, oneBy, len(oneBy)+len(severalBy))
			if out.RunnerUp > 0 {
				out.WhyRunner = whyK(out.RunnerUp, vs, mixK, score[out.RunnerUp], total2, "Runner-up", w, counts)
			}
			return out
		}
		several = 1 - share1
	} else {
		several = 1
	}
	// The edge wins only when it outweighs all the weight inside the range together: most of the
	// evidence then says the range is too short. Against the best single k alone, three likelihood
	// criteria still improving at max-k (common on large non-Gaussian samples) outvoted a k four
	// criteria agreed on (S4 seed 2 on the grid).
	if edge > 0 && edge > total2-edge {
		out := build(maxK, true, "stage 2: the criteria still improving at max-k outweigh all the k inside the range: "+
			"the best k may be larger; widen --max-k")
		out.AtMaxK = true
		out.Support = several * edge / total2
		out.Confidence = w.Confidence(out.Support)
		if len(ranked) > 0 {
			out.RunnerUp = ranked[0]
			out.WhyRunner = whyK(out.RunnerUp, vs, mixK, score[out.RunnerUp], total2, "Runner-up", w, counts)
		}
		out.Why = fmt.Sprintf("k = %d (max-k): criteria holding %.0f%% of the weighted vote are still improving at the top of the range, "+
			"so the data may hold more clusters than --max-k allows.", maxK, 100*edge/total2)
		return out
	}
	if len(ranked) == 0 {
		k := max(minK, 1)
		out := build(k, false, "no criterion voted for k >= 2: no cluster structure found")
		out.Why = "No criterion found more than one group."
		return out
	}
	K := ranked[0]
	out := build(K, true, "stage 1 says several groups; stage 2: the k >= 2 with the most vote weight "+
		"(weights measured on the benchmark grid; votes at max-k only say 'k may be larger')")
	out.Support = several * score[K] / total2
	out.Confidence = w.Confidence(out.Support)
	// The other k: a k near K, or whose own neighbourhood holds K, is K's vote, not a rival.
	others := slices.DeleteFunc(slices.Clone(ranked[1:]), func(k int) bool { return counts(k, K) || near(K, k) })
	for _, k := range others {
		if score[k] >= unstableRatio*score[K] {
			out.Alternatives = append(out.Alternatives, k)
		}
	}
	if minK <= 1 && share1 >= unstableRatio*(1-share1) {
		out.Alternatives = append(out.Alternatives, 1)
	}
	if len(others) > 0 {
		out.RunnerUp = others[0]
	} else if edge > 0 {
		out.RunnerUp = maxK
	}
	// A verdict the grid calls a coin toss is unstable even without a close second: its weight is
	// spread over many k, and another seed moves it.
	if out.Confidence < lowConfidence && len(out.Alternatives) == 0 && out.RunnerUp > 0 {
		out.Alternatives = append(out.Alternatives, out.RunnerUp)
	}
	out.Unstable = len(out.Alternatives) > 0
	out.Why = whyK(K, vs, mixK, score[K], total2, "", w, counts)
	if out.RunnerUp > 0 {
		out.WhyRunner = whyK(out.RunnerUp, vs, mixK, score[out.RunnerUp], total2, "Runner-up", w, counts)
	}
	return out
}

// verdict is Decide with the result's votes and one-mode check and the embedded weights.
func verdict(res *Result, opt Options) Verdict {
	return Decide(res.Votes, res.Modes, opt.MinK, opt.MaxK, defaultWeights)
}

// whyOne is Verdict.Why for a k = 1 verdict.
func whyOne(m ModeCheck, oneBy []string, voters int) string {
	var b strings.Builder
	b.WriteString("One group, no cluster structure: ")
	if m.N > 0 && !m.Modes {
		fmt.Fprintf(&b, "along the line that best splits the rows in two, the rows form a single peak (one-mode check, p = %.2f)", m.PValue)
		if len(oneBy) > 0 {
			b.WriteString(", and ")
		}
	}
	if len(oneBy) > 0 {
		fmt.Fprintf(&b, "%d of %d criteria able to say 'one group' said so", len(oneBy), voters)
	}
	b.WriteString(".")
	return b.String()
}

// whyK is Verdict.Why (or WhyRunner, with prefix) for a k >= 2: its weight share and the
// strongest criteria behind it, each with what it measures.
func whyK(k int, vs []Vote, mixK int, score, total float64, prefix string, w Weights, counts func(j, k int) bool) string {
	var by []string
	around := false // some of them name a k near k, not k itself
	for _, v := range vs {
		if !v.Abstain && counts(v.K, k) {
			by = append(by, v.Criterion)
			around = around || v.K != k
		}
	}
	named := len(by) // criteria, without the derived voter
	if mixK == k && w.Choice[NameMixturesAgree] > 0 {
		by = append(by, NameMixturesAgree)
	}
	slices.SortStableFunc(by, func(a, b string) int {
		wa, wb := w.Choice[a], w.Choice[b]
		switch {
		case wa > wb:
			return -1
		case wa < wb:
			return 1
		}
		return 0
	})
	var b strings.Builder
	if prefix != "" {
		b.WriteString(prefix + " ")
	}
	share := 0.0
	if total > 0 {
		share = score / total
	}
	fmt.Fprintf(&b, "k = %d holds %.0f%% of the weighted vote", k, 100*share)
	if len(by) > 0 {
		reasons := make([]string, 0, 2)
		for _, c := range by[:min(2, len(by))] {
			reasons = append(reasons, plain[c])
		}
		noun := "criteria"
		if named == 1 {
			noun = "criterion"
		}
		if around {
			noun += fmt.Sprintf(" naming k = %d to %d", k-nearK(k), k+nearK(k))
		}
		fmt.Fprintf(&b, " (%d %s): %s", named, noun, strings.Join(reasons, "; "))
	}
	b.WriteString(".")
	return b.String()
}
