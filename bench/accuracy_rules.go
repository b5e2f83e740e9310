package bench

import (
	"fmt"
	"math"
	"slices"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/sketch"
)

// The rules the defaults are chosen by. Each is checked on every workload of its experiment (the
// worst workload decides), except the verdict rule, which pools the runs of all workloads.
const (
	RuleSilP95      = 0.01 // 95th percentile of |anchor estimate − exact silhouette|, anchors against all rows
	RuleWCSSP95     = 0.01 // 95th percentile of the coreset's relative WCSS error
	RuleExcessP95   = 0.01 // 95th percentile of the relative excess cost of coreset-fitted centres
	RuleGapDiffP95  = 0.05 // 95th percentile of |Gap(K) − large-run Gap(K)|
	RuleVerdictDiff = 0.01 // largest share of runs whose verdict differs from the exact-data verdict
)

// Recommendation is the smallest size meeting a rule, beside the current default.
type Recommendation struct {
	Setting  string // the option, as the flag names it
	Rule     string
	Current  string
	Smallest string // smallest measured size meeting the rule, or "none measured"
	Evidence string // the worst measured value at that size
}

// Recommend applies the rules to a finished run.
func (a *Accuracy) Recommend() []Recommendation {
	def := criteria.DefaultOptions()
	var out []Recommendation

	// Silhouette anchors.
	r := Recommendation{Setting: "--anchors", Current: fmt.Sprint(def.Anchors),
		Rule: fmt.Sprintf("p95 abs. error ≤ %.3g on every workload (anchors against all rows)", RuleSilP95)}
	r.Smallest, r.Evidence = smallest(a.Config.SilAnchors, func(m int) (float64, bool) {
		return worst(a.Silhouette, func(s SilRow) (float64, bool) { return s.AbsErr.P95, s.Series == "all rows" && s.M == m })
	}, func(v float64) bool { return v <= RuleSilP95 }, "worst p95 %.4f")
	out = append(out, r)

	// Coreset size.
	r = Recommendation{Setting: "--coreset", Current: fmt.Sprint(sketch.DefaultCoresetSize),
		Rule: fmt.Sprintf("p95 WCSS error ≤ %.3g%% and p95 excess cost ≤ %.3g%% on every workload", 100*RuleWCSSP95, 100*RuleExcessP95)}
	r.Smallest, r.Evidence = smallest(a.Config.CoreSizes, func(m int) (float64, bool) {
		w, ok1 := worst(a.Coreset, func(c CoreRow) (float64, bool) { return c.WCSS.P95 / RuleWCSSP95, c.Summary == "coreset" && c.M == m })
		e, ok2 := worst(a.Coreset, func(c CoreRow) (float64, bool) {
			return c.Excess.P95 / RuleExcessP95, c.Summary == "coreset" && c.M == m
		})
		return math.Max(w, e), ok1 && ok2
	}, func(v float64) bool { return v <= 1 }, "worst p95 / limit %.2f")
	out = append(out, r)

	// Gap statistic: the cheapest (size, B) meeting both gap rules on both references.
	r = Recommendation{Setting: "--gap-sample, --gap-refs", Current: fmt.Sprintf("%d, %d", def.GapSample, def.GapRefs),
		Rule: fmt.Sprintf("p95 abs ΔGap(K) ≤ %.3g vs the large run on every workload (both references), cheapest (B+1)·size",
			RuleGapDiffP95)}
	type cand struct{ size, B int }
	var cands []cand
	for _, s := range a.Config.GapSizes {
		for _, b := range a.Config.GapBs {
			cands = append(cands, cand{s, b})
		}
	}
	slices.SortStableFunc(cands, func(x, y cand) int { return (x.B+1)*x.size - (y.B+1)*y.size })
	r.Smallest = "none measured"
	for _, c := range cands {
		d, ok1 := worst(a.Gap, func(g GapRow) (float64, bool) { return g.DiffAtK.P95, g.Size == c.size && g.B == c.B })
		ch, ok2 := worst(a.Gap, func(g GapRow) (float64, bool) { return g.ChoiceDiffers, g.Size == c.size && g.B == c.B })
		if ok1 && ok2 && d <= RuleGapDiffP95 {
			r.Smallest = fmt.Sprintf("%d, %d", c.size, c.B)
			r.Evidence = fmt.Sprintf("worst p95 abs ΔGap(K) %.3f; chosen k still differs from the large run's in up to %.0f%% of runs", d, 100*ch)
			break
		}
	}
	out = append(out, r)
	gapSample := def.GapSample
	if r.Smallest != "none measured" {
		fmt.Sscanf(r.Smallest, "%d", &gapSample)
	}

	// Uniform sample: a fresh subsample of it is the gap data side.
	out = append(out, Recommendation{Setting: "--sample", Current: fmt.Sprint(sketch.DefaultSampleSize),
		Rule:     "smallest power of two ≥ 2 × gap sample (Evaluate draws the gap data side from it)",
		Smallest: fmt.Sprint(nextPow2(2 * gapSample)), Evidence: "derived from the gap row"})

	// Verdict.
	r = Recommendation{Setting: "--coreset (verdict)", Current: fmt.Sprint(sketch.DefaultCoresetSize),
		Rule: fmt.Sprintf("verdict differs from the exact-data verdict in ≤ %.3g%% of all runs", 100*RuleVerdictDiff)}
	r.Smallest, r.Evidence = smallest(a.Config.VerdictSizes, func(m int) (float64, bool) {
		n, diff := 0, 0.0
		for _, v := range a.Verdict {
			if v.M == m {
				n += v.Runs
				diff += v.Differs * float64(v.Runs)
			}
		}
		return diff / float64(max(n, 1)), n > 0
	}, func(v float64) bool { return v <= RuleVerdictDiff }, "share differing %.3f")
	out = append(out, r)
	return out
}

// worst returns the largest value of f over the rows it selects.
func worst[T any](rows []T, f func(T) (float64, bool)) (float64, bool) {
	w, any := math.Inf(-1), false
	for _, r := range rows {
		if v, ok := f(r); ok {
			any = true
			if math.IsNaN(v) {
				v = math.Inf(1)
			}
			w = math.Max(w, v)
		}
	}
	return w, any
}

// smallest returns the smallest measured size from which on every measured size passes, and its
// evidence.
func smallest(sizes []int, value func(int) (float64, bool), pass func(float64) bool, evidence string) (string, string) {
	s := slices.Clone(sizes)
	slices.Sort(s)
	// The smallest size that passes where every larger measured size passes too, so that one lucky
	// cell does not decide.
	best := -1
	for i := len(s) - 1; i >= 0; i-- {
		v, ok := value(s[i])
		if !ok {
			continue
		}
		if !pass(v) {
			break
		}
		best = i
	}
	if best >= 0 {
		v, _ := value(s[best])
		return fmt.Sprint(s[best]), fmt.Sprintf(evidence, v)
	}
	if len(s) > 0 {
		if v, ok := value(s[len(s)-1]); ok {
			return "none measured", fmt.Sprintf("at %d: "+evidence, s[len(s)-1], v)
		}
	}
	return "none measured", ""
}

func nextPow2(n int) int {
	p := 1
	for p < n {
		p *= 2
	}
	return p
}
