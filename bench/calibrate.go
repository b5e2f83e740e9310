package bench

import (
	"cmp"
	"encoding/json"
	"fmt"
	"hash/fnv"
	"math"
	"slices"
	"strings"

	"github.com/kgauge/kgauge/criteria"
)

// candidates is m in the choice weight log(p/(1-p)) + log(m-1): the k >= 2 of the default range
// 1..20 (19 candidates).
const candidates = 19

// votes returns the run's votes in criteria.CriterionNames order (0 = abstained).
func (r GridRun) votes() []criteria.Vote {
	var vs []criteria.Vote
	for _, c := range criteria.CriterionNames() {
		k, ok := r.Votes[c]
		vs = append(vs, criteria.Vote{Criterion: c, K: k, Abstain: !ok || k == 0})
	}
	return vs
}

// heldOut reports whether a run's data set is in the held-out half (a hash of its name), used to
// check the calibration; weights and the calibration table come from the other half.
func (r GridRun) heldOut() bool {
	h := fnv.New32a()
	h.Write([]byte(r.Case))
	return h.Sum32()%2 == 1
}

// primary reports whether the run counts as a grid point: the extra seeds of the seed-stability
// runs repeat a data set and are left out of weights and calibration.
func (r GridRun) primary() bool { return !r.Stable || r.Seed == 1 }

// Decide returns the run's verdict with weights w.
func (r GridRun) Decide(w criteria.Weights) criteria.Verdict {
	return criteria.Decide(r.votes(), r.Modes, 1, r.MaxK, w)
}

// logit returns log(p/(1-p)).
func logit(p float64) float64 { return math.Log(p / (1 - p)) }

// DeriveWeights derives the vote weights and the calibration table from the primary runs outside
// the held-out half (see criteria.Weights for the formulas; p is smoothed as (right+1)/(n+2)),
// each weight divided by its design factor among voters that share its errors.
func DeriveWeights(runs []GridRun, source string) criteria.Weights {
	w := criteria.Weights{Source: source, Structure: map[string]float64{}, Choice: map[string]float64{}}
	var train []GridRun
	for _, r := range runs {
		if r.primary() && !r.heldOut() {
			train = append(train, r)
		}
	}
	round := func(v float64) float64 { return math.Round(v*1000) / 1000 }
	voters := append(slices.DeleteFunc(criteria.CriterionNames(), func(c string) bool {
		return !criteria.CanSayOne(c)
	}), criteria.NameOneMode, criteria.NameSharedK)
	for _, c := range voters {
		right, n := 0, 0
		for _, r := range train {
			var one bool
			if c == criteria.NameOneMode {
				if r.Modes.N == 0 {
					continue
				}
				one = !r.Modes.Modes
			} else if c == criteria.NameSharedK {
				one = !criteria.SharedK(r.votes(), 1, r.MaxK)
			} else {
				k := r.Votes[c]
				if k == 0 {
					continue
				}
				one = k == 1
			}
			n++
			if one == (r.K == 1) {
				right++
			}
		}
		w.Structure[c] = max(0, logit((float64(right)+1)/(float64(n)+2)))
	}
	for _, c := range choiceVoters() {
		right, n := 0, 0
		for _, r := range train {
			k := r.choiceSays(c)
			if r.K < 2 || k == 0 {
				continue
			}
			n++
			if k == r.K {
				right++
			}
		}
		w.Choice[c] = max(0, logit((float64(right)+1)/(float64(n)+2))+math.Log(candidates-1))
	}
	// Voters that make the same mistakes are not independent: divide each weight by its design
	// factor √(1 + Σ ρ) over the voters it shares errors with (ρ: sharedChoiceErrors or
	// sharedStructureErrors at least sharedErrorFloor); Kish's design effect 1 + (m-1)ρ for m
	// correlated voters and its square root, the ratio of standard errors (common practice).
	// Dividing by the design effect itself was measured too (DEVELOPERS.md, issue 12): it helped
	// Tibshirani scenario (d) at max-k 6 more but made A1 wrong at seed 1 and S4 name 3 at seed 6.
	for _, stage := range []struct {
		w      map[string]float64
		shared func(a, b string) float64
	}{
		{w.Structure, func(a, b string) float64 { return sharedStructureErrors(train, a, b) }},
		{w.Choice, func(a, b string) float64 { return sharedChoiceErrors(train, a, b) }},
	} {
		deff := map[string]float64{}
		for a := range stage.w {
			deff[a] = 1
			for b := range stage.w {
				if r := stage.shared(a, b); a != b && r >= sharedErrorFloor {
					deff[a] += r
				}
			}
		}
		for a := range stage.w {
			stage.w[a] = round(stage.w[a] / math.Sqrt(deff[a]))
		}
	}
	// Calibration: support of each training verdict (weights above, no table yet) against
	// whether it was right. The share right is modelled as a logistic function of the support
	// fitted by maximum likelihood (Platt scaling; Platt 1999, common practice), capped at the
	// smoothed share right of the training runs at that support or above (the rule of succession,
	// calibrationRate; above the support of the calibrationTopRuns-th strongest run, of those
	// strongest runs), so no confidence claims more than the runs behind it show, and made
	// non-decreasing by taking, at each support, the least value from there up. It is stored as
	// a step table every calibrationStep of support. Equal-count bins with pool-adjacent-violators
	// were used before and measured worse on the held-out half (DEVELOPERS.md, issue 12, ninth
	// round): their lowest bin pooled supports 0.18 to 0.39 and told 0.79 to verdicts of
	// support 0.11 to 0.3, which the grid gets right less than half of the time.
	var pts []calPoint
	for _, r := range train {
		v := r.Decide(w)
		pts = append(pts, calPoint{v.Support, v.K == r.K})
	}
	w.Calibration = calibrationTable(pts, round)
	return w
}

// calPoint is one training verdict's support and whether it was right.
type calPoint struct {
	support float64
	right   bool
}

// calibrationStep is the spacing of the calibration table's support steps.
const calibrationStep = 0.02

// calibrationTopRuns: the cap of the calibration never rests on fewer training runs than this
// (the strongest ones); twenty runs all right cap it at 21/22 = 0.955.
const calibrationTopRuns = 20

// calibrationRate is the rule of succession, (right+1)/(all+2) (Laplace; common practice):
// twelve of twelve right is 0.93, not a certainty a dozen runs cannot show.
func calibrationRate(right, all int) float64 { return float64(right+1) / float64(all+2) }

// plattFit fits P(right) = 1/(1+exp(-(a+b·support))) to pts by maximum likelihood (Newton's
// method on the two parameters).
func plattFit(pts []calPoint) (a, b float64) {
	for range 100 {
		var ga, gb, haa, hab, hbb float64
		for _, p := range pts {
			y := 0.0
			if p.right {
				y = 1
			}
			q := 1 / (1 + math.Exp(-(a + b*p.support)))
			h := q * (1 - q)
			ga += y - q
			gb += (y - q) * p.support
			haa += h
			hab += h * p.support
			hbb += h * p.support * p.support
		}
		det := haa*hbb - hab*hab
		if !(det > 0) {
			break
		}
		da, db := (hbb*ga-hab*gb)/det, (haa*gb-hab*ga)/det
		a, b = a+da, b+db
		if math.Abs(da)+math.Abs(db) < 1e-12 {
			break
		}
	}
	return a, b
}

// calibrationTable is the step table of the calibrated share right (see DeriveWeights) at
// supports 0, calibrationStep, …, 1, each step with the training runs whose support falls in it.
func calibrationTable(pts []calPoint, round func(float64) float64) []criteria.CalPoint {
	if len(pts) == 0 {
		return nil
	}
	a, b := plattFit(pts)
	sorted := slices.Clone(pts)
	slices.SortFunc(sorted, func(x, y calPoint) int { return cmp.Compare(y.support, x.support) })
	top := sorted[min(calibrationTopRuns, len(sorted))-1].support // the cap's highest support
	steps := int(math.Round(1/calibrationStep)) + 1
	table := make([]criteria.CalPoint, steps)
	for i := range table {
		s := float64(i) * calibrationStep
		right, all := 0, 0
		for _, p := range pts {
			if p.support >= min(s, top) {
				all++
				if p.right {
					right++
				}
			}
			if p.support >= s && (i == steps-1 || p.support < s+calibrationStep) {
				table[i].Runs++
			}
		}
		table[i].Support = round(s)
		table[i].Right = min(1/(1+math.Exp(-(a+b*s))), calibrationRate(right, all))
	}
	for i := steps - 2; i >= 0; i-- {
		table[i].Right = min(table[i].Right, table[i+1].Right)
	}
	for i := range table {
		table[i].Right = round(table[i].Right)
	}
	return table
}

// choiceVoters are the voters of stage 2: every criterion and the derived
// criteria.NameMixturesAgree.
func choiceVoters() []string {
	return append(criteria.CriterionNames(), criteria.NameMixturesAgree)
}

// choiceSays returns the k stage-2 voter c names in run r (0: it abstains; a criterion still
// improving at max-k is stored as max-k).
func (r GridRun) choiceSays(c string) int {
	if c == criteria.NameMixturesAgree {
		return criteria.MixturesAgree(r.votes(), 1, r.MaxK)
	}
	return r.Votes[c]
}

// sharedErrorFloor: two voters count as sharing their errors when, of the training runs in which
// either is wrong, both make the same mistake in at least this share. Measured on the grid
// (bench/report/CALIBRATION.md, "Shared errors"): silhouette, simplified silhouette and
// Davies-Bouldin share 50-62% of their wrong k, split agreement and the one-mode check 43% of
// their wrong "one group" calls; every other pair at most 29%.
const sharedErrorFloor = 0.4

// sharedChoiceErrors is the share of the multi-cluster runs in which a or b names a wrong k >= 2
// where both name the same wrong k.
func sharedChoiceErrors(runs []GridRun, a, b string) float64 {
	both, either := 0, 0
	for _, r := range runs {
		if r.K < 2 {
			continue
		}
		ka, kb := r.choiceSays(a), r.choiceSays(b)
		wa, wb := ka >= 2 && ka != r.K, kb >= 2 && kb != r.K
		if wa || wb {
			either++
		}
		if wa && wb && ka == kb {
			both++
		}
	}
	if either == 0 {
		return 0
	}
	return float64(both) / float64(either)
}

// severalSays returns whether stage-1 voter c says "several groups" in run r (ok false if it
// abstains).
func (r GridRun) severalSays(c string) (several, ok bool) {
	if c == criteria.NameOneMode {
		return r.Modes.Modes, r.Modes.N > 0
	}
	if c == criteria.NameSharedK {
		return criteria.SharedK(r.votes(), 1, r.MaxK), true
	}
	k := r.Votes[c]
	return k >= 2, k > 0
}

// sharedStructureErrors is the share of the runs in which a or b is wrong about "one group or
// several" where both are.
func sharedStructureErrors(runs []GridRun, a, b string) float64 {
	both, either := 0, 0
	for _, r := range runs {
		sa, oka := r.severalSays(a)
		sb, okb := r.severalSays(b)
		wa, wb := oka && sa != (r.K >= 2), okb && sb != (r.K >= 2)
		if wa || wb {
			either++
		}
		if wa && wb {
			both++
		}
	}
	if either == 0 {
		return 0
	}
	return float64(both) / float64(either)
}

// MarshalWeights renders weights as the criteria/weights.json format.
func MarshalWeights(w criteria.Weights) ([]byte, error) {
	b, err := json.MarshalIndent(w, "", " ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

// oldVerdict is the hand-set rule the weights replace (kgauge before issue 12), on the eleven
// criteria it knew: k = 1 if most of gap_box, gap_pca, bic_gmm, bic_kmeans say 1; otherwise the
// k >= 2 below max-k with the most votes (ties: more gap votes, then the smaller k), or max-k if
// the votes at max-k outnumber it.
func oldVerdict(r GridRun) int {
	n1, nv := 0, 0
	for _, c := range []string{criteria.NameGapBox, criteria.NameGapPCA, criteria.NameBICGMM, criteria.NameBICKMeans} {
		if k := r.Votes[c]; k > 0 {
			nv++
			if k == 1 {
				n1++
			}
		}
	}
	if nv > 0 && 2*n1 > nv {
		return 1
	}
	count, gap := map[int]int{}, map[int]int{}
	edge := 0
	for c, k := range r.Votes {
		if c == criteria.NameSplitAgreement || k < 1 {
			continue
		}
		if k == r.MaxK {
			edge++
			continue
		}
		count[k]++
		if c == criteria.NameGapBox || c == criteria.NameGapPCA {
			gap[k]++
		}
	}
	best, bk := 0, 0
	for k, n := range count {
		if k < 2 {
			continue
		}
		if n > best || (n == best && (gap[k] > gap[bk] || (gap[k] == gap[bk] && k < bk))) {
			best, bk = n, k
		}
	}
	if edge > best {
		return r.MaxK
	}
	if bk == 0 {
		return 1
	}
	return bk
}

// CalibrationMarkdown renders bench/report/CALIBRATION.md from the runs and the weights.
func CalibrationMarkdown(runs []GridRun, w criteria.Weights, command string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "# The vote's weights and calibration (issue 12)\n\nMade by `%s` (grid runs saved in "+
		"`bench/report/grid.json`; weights written to `criteria/weights.json`, embedded in the binary).\n\n", command)
	b.WriteString("Every run goes through the CLI's path (probe, sketch in 65,536-row units, `kgauge.Summarize` with the default scaling (`auto`: z-scores, the logarithm of a positive right-skewed column whose logarithm is near symmetric), " +
		"`criteria.Evaluate`), with a coreset of 2,000 points (the sample keeps its default 4,096) to keep the grid near 10 minutes " +
		"on two shared cores. Data sets: the five Tibshirani, Walther & Hastie (2001) scenarios (10 realizations each), Fränti S1–S4, " +
		"A1, DIM032, DIM064, Unbalance and Ruspini (testdata/refsets), 37 generated mixture designs in two realizations each " +
		"(k 3 and 6 in 2 and 10 dimensions, separation 4 and 7 sd, elongation 1, 2 and 4; k 10 and 16 in 10 and 32 dimensions, " +
		"separation 4 and 6 sd, 300 rows per cluster; unequal sizes, unequal spreads, 2% far outliers, heavy tails, log-normal " +
		"clusters) and 10 one-cluster shapes (correlated Gaussian, log-normal, Student t, uniform, elongated). Seeds 1..10 of S4, " +
		"A1, Unbalance and one realization of each scenario measure seed stability; only seed 1 enters weights and calibration. " +
		"Every run's per-k scores are stored, so the votes are recast with the current rules whenever the grid is read " +
		"(`GridRun.Revote`).\n\n")
	b.WriteString("Stage 1 (one group or several) hears the criteria able to say k = 1, the one-mode check and `shared_k` (at least " +
		fmt.Sprintf("%d criteria naming one k ≥ 3); `bic_gmm`'s k = 1 has no say when the rows are fewer than ten per parameter "+
			"of a two-component full-covariance mixture. Where the coreset's points (the run's `points`) are at least ten per "+
			"parameter of a full-covariance mixture at max-k, the mixture criteria score every k by it; below that they score "+
			"each k by the lower BIC of the full and the spherical mixture, each fitted where it has two points per parameter, "+
			"pass over a k where neither has, and have no say when their minimum is the largest k left (or the full model's "+
			"at the largest k it is fitted for).\n\n", criteria.SharedKMin))
	b.WriteString("Weights and the calibration table come from the data sets outside the held-out half (a hash of the name); " +
		"the reliability table below is measured on the held-out half only.\n\n")
	b.WriteString("## Weights\n\n| voter | stage 1 (one group or several) | stage 2 (which k) |\n| --- | --- | --- |\n")
	names := append(choiceVoters(), criteria.NameOneMode, criteria.NameSharedK)
	for _, c := range names {
		s1, ok1 := w.Structure[c]
		s2, ok2 := w.Choice[c]
		f := func(v float64, ok bool) string {
			if !ok {
				return "–"
			}
			return fmt.Sprintf("%.3f", v)
		}
		fmt.Fprintf(&b, "| `%s` | %s | %s |\n", c, f(s1, ok1), f(s2, ok2))
	}
	b.WriteString("\n## Shared errors (training half)\n\nVoters that make the same mistakes are not independent " +
		"witnesses: each weight above is the voter's log-odds divided by the square root of 1 + the shares below that reach " +
		fmt.Sprintf("%.1f (its design factor). Pairs sharing at least 20%%:\n\n", sharedErrorFloor) +
		"| stage | voters | share of their errors in common | counted |\n| --- | --- | --- | --- |\n")
	var train []GridRun
	for _, r := range runs {
		if r.primary() && !r.heldOut() {
			train = append(train, r)
		}
	}
	for _, st := range []struct {
		name   string
		voters []string
		shared func(a, b string) float64
	}{
		{"1", append(slices.DeleteFunc(criteria.CriterionNames(), func(c string) bool { return !criteria.CanSayOne(c) }), criteria.NameOneMode, criteria.NameSharedK),
			func(a, b string) float64 { return sharedStructureErrors(train, a, b) }},
		{"2", choiceVoters(), func(a, b string) float64 { return sharedChoiceErrors(train, a, b) }},
	} {
		for i, a := range st.voters {
			for _, c := range st.voters[i+1:] {
				if r := st.shared(a, c); r >= 0.2 {
					counted := "no"
					if r >= sharedErrorFloor {
						counted = "yes"
					}
					fmt.Fprintf(&b, "| %s | `%s`, `%s` | %.2f | %s |\n", st.name, a, c, r, counted)
				}
			}
		}
	}
	b.WriteString("\n## Calibration table (training half)\n\nThe share right is a logistic function of the support fitted to " +
		"the training runs (Platt scaling), capped at the share right, smoothed as (right+1)/(runs+2), of the training runs " +
		fmt.Sprintf("at that support or above (never fewer than the %d strongest), non-decreasing, in steps of %.2f; "+
			"*runs* counts the training runs whose support falls in the step.\n\n", calibrationTopRuns, calibrationStep) +
		"| support from | share right | runs |\n| --- | --- | --- |\n")
	for _, p := range w.Calibration {
		fmt.Fprintf(&b, "| %.3f | %.3f | %d |\n", p.Support, p.Right, p.Runs)
	}
	b.WriteString("\n## Reliability on the held-out half\n\n| confidence | runs | mean confidence | share right |\n| --- | --- | --- | --- |\n")
	edges := []float64{0, 0.5, 0.7, 0.85, 0.95, 1.0001}
	for i := 0; i+1 < len(edges); i++ {
		n, right, sum := 0, 0, 0.0
		for _, r := range runs {
			if !r.primary() || !r.heldOut() {
				continue
			}
			v := r.Decide(w)
			if v.Confidence >= edges[i] && v.Confidence < edges[i+1] {
				n++
				sum += v.Confidence
				if v.K == r.K {
					right++
				}
			}
		}
		if n > 0 {
			fmt.Fprintf(&b, "| %.2f–%.2f | %d | %.3f | %.3f |\n", edges[i], math.Min(1, edges[i+1]), n, sum/float64(n), float64(right)/float64(n))
		}
	}
	b.WriteString("\n## Verdicts right, before (the hand-set rule) and after (the weighted vote)\n\n" +
		"Seed 1 of every data set (for the scenarios, every realization).\n\n| data set | true k | runs | before | after |\n| --- | --- | --- | --- | --- |\n")
	type tally struct{ k, n, before, after int }
	var order []string
	t := map[string]*tally{}
	for _, r := range runs {
		if !r.primary() {
			continue
		}
		key := r.Case
		if i := strings.IndexByte(key, '#'); i > 0 && r.Family == "scenario" {
			key = key[:i]
		}
		if t[key] == nil {
			t[key] = &tally{k: r.K}
			order = append(order, key)
		}
		x := t[key]
		x.n++
		if oldVerdict(r) == r.K {
			x.before++
		}
		if r.Decide(w).K == r.K {
			x.after++
		}
	}
	tb, ta, tn := 0, 0, 0
	for _, key := range order {
		x := t[key]
		fmt.Fprintf(&b, "| %s | %d | %d | %d | %d |\n", key, x.k, x.n, x.before, x.after)
		tb, ta, tn = tb+x.before, ta+x.after, tn+x.n
	}
	fmt.Fprintf(&b, "| all | | %d | %d | %d |\n", tn, tb, ta)
	flagged, flaggedRight, plainRight := 0, 0, 0
	for _, r := range runs {
		if !r.primary() {
			continue
		}
		v := r.Decide(w)
		switch {
		case v.Unstable:
			flagged++
			if v.K == r.K {
				flaggedRight++
			}
		case v.K == r.K:
			plainRight++
		}
	}
	fmt.Fprintf(&b, "\nOf these %d verdicts, %d are flagged unstable (%d of them right); of the %d not flagged, %d are right.\n",
		tn, flagged, flaggedRight, tn-flagged, plainRight)
	b.WriteString("\n## Seed stability (seeds 1..10)\n\n")
	b.WriteString(seedStabilityTable(runs, w))
	return b.String()
}

// seedStabilityTable writes the seed-stability table of the seed runs among runs (GridRun.Stable),
// voted with w: each data set's verdicts at seeds 1..n, the most common, how many agree with it
// and how many are flagged unstable.
func seedStabilityTable(runs []GridRun, w criteria.Weights) string {
	var b strings.Builder
	b.WriteString("A verdict flagged unstable is marked `?`. Issue 12 asks that at least 9 of 10 seeds agree, or that the output say the verdict is unstable: the last column counts the runs that do one or the other.\n\n| data set | true k | verdicts, seeds 1..10 | most common | runs agreeing | runs flagged unstable | agreeing or flagged |\n| --- | --- | --- | --- | --- | --- | --- |\n")
	var sorder []string
	seen := map[string]bool{}
	for _, r := range runs {
		if r.Stable && !seen[r.Case] {
			seen[r.Case] = true
			sorder = append(sorder, r.Case)
		}
	}
	for _, c := range sorder {
		var ks []string
		var verdicts []criteria.Verdict
		unstable, k := 0, 0
		for _, r := range runs {
			if r.Case != c || !r.Stable {
				continue
			}
			v := r.Decide(w)
			k = r.K
			mark := ""
			if v.Unstable {
				unstable++
				mark = "?"
			}
			ks = append(ks, fmt.Sprint(v.K)+mark)
			verdicts = append(verdicts, v)
		}
		mode, mc, covered := seedAgreement(verdicts)
		fmt.Fprintf(&b, "| %s | %d | %s | %d | %d of %d | %d | %d of %d |\n", c, k, strings.Join(ks, " "), mode, mc, len(ks), unstable, covered, len(ks))
	}
	return b.String()
}

// seedAgreement returns the most common k of verdicts (ties: the smaller k), how many verdicts
// name it, and how many either name it or are flagged unstable with alternatives.
func seedAgreement(vs []criteria.Verdict) (mode, count, covered int) {
	n := map[int]int{}
	for _, v := range vs {
		n[v.K]++
	}
	for k, c := range n {
		if c > count || (c == count && k < mode) {
			mode, count = k, c
		}
	}
	for _, v := range vs {
		if v.K == mode || (v.Unstable && len(v.Alternatives) > 0) {
			covered++
		}
	}
	return mode, count, covered
}
