package criteria

import (
	"math"
	"slices"
	"strings"
	"testing"
)

// equalWeights gives every voter weight 1 and a two-step calibration.
func equalWeights() Weights {
	w := Weights{Structure: map[string]float64{NameOneMode: 1}, Choice: map[string]float64{},
		Calibration: []CalPoint{{0, 0.3, 10}, {0.5, 0.8, 10}}}
	for _, c := range CriterionNames() {
		w.Choice[c] = 1
		if CanSayOne(c) {
			w.Structure[c] = 1
		}
	}
	return w
}

func votesOf(ks map[string]int) []Vote {
	var vs []Vote
	for _, c := range CriterionNames() {
		k, ok := ks[c]
		vs = append(vs, Vote{Criterion: c, K: k, Abstain: !ok})
	}
	return vs
}

func TestDecide(t *testing.T) {
	w := equalWeights()
	one := ModeCheck{N: 500, PValue: 0.6}
	split := ModeCheck{N: 500, PValue: 0.001, Modes: true}
	for _, tc := range []struct {
		name      string
		votes     map[string]int
		modes     ModeCheck
		k         int
		structure bool
		unstable  bool
		alts      []int
		runner    int
	}{
		{"one group by weight (4 of 6 stage-1 voters)",
			map[string]int{NameGapBox: 1, NameGapPCA: 1, NameBICGMM: 7, NameBICKMeans: 1, NameSplitAgreement: 3,
				NameSilhouette: 2, NameCalinskiHarabasz: 2}, one, 1, false, false, []int{}, 2},
		{"exact stage-1 tie goes to one group, flagged",
			map[string]int{NameGapBox: 1, NameGapPCA: 1, NameBICGMM: 4, NameBICKMeans: 4, NameSplitAgreement: 4,
				NameSilhouette: 4}, one, 1, false, true, []int{4}, 4},
		{"several groups, clear k",
			map[string]int{NameGapBox: 3, NameGapPCA: 3, NameBICGMM: 3, NameBICKMeans: 3, NameSplitAgreement: 3,
				NameSilhouette: 3, NameElbow: 4, NameWard: 3}, split, 3, true, false, []int{}, 4},
		{"a 2-2 tie is flagged and lists the other k, never decided by a criterion",
			map[string]int{NameGapBox: 5, NameGapPCA: 5, NameBICGMM: 6, NameBICKMeans: 6, NameSplitAgreement: 1},
			split, 5, true, true, []int{6}, 6},
		{"weight spread over many k: low confidence, flagged with the runner-up",
			map[string]int{NameGapBox: 3, NameGapPCA: 5, NameBICGMM: 7, NameBICKMeans: 9, NameSplitAgreement: 3,
				NameSilhouette: 4, NameElbow: 6}, split, 3, true, true, []int{4}, 4},
		{"votes at max-k outweigh the rest",
			map[string]int{NameGapBox: 3, NameBICGMM: 20, NameAICGMM: 20, NameBICKMeans: 20, NameSplitAgreement: 3},
			split, 20, true, false, []int{}, 3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			v := Decide(votesOf(tc.votes), tc.modes, 1, 20, w)
			if v.K != tc.k || v.Structure != tc.structure || v.Unstable != tc.unstable || !slices.Equal(v.Alternatives, tc.alts) || v.RunnerUp != tc.runner {
				t.Errorf("got k=%d structure=%v unstable=%v alternatives=%v runner-up %d; want %d %v %v %v %d",
					v.K, v.Structure, v.Unstable, v.Alternatives, v.RunnerUp, tc.k, tc.structure, tc.unstable, tc.alts, tc.runner)
			}
			if !(v.Support >= 0 && v.Support <= 1) || math.IsNaN(v.Confidence) {
				t.Errorf("support %v, confidence %v", v.Support, v.Confidence)
			}
			if v.Why == "" || strings.Contains(v.Why, "%!") {
				t.Errorf("why: %q", v.Why)
			}
		})
	}
}

func TestConfidenceSteps(t *testing.T) {
	w := equalWeights()
	for _, tc := range []struct{ s, want float64 }{{0, 0.3}, {0.49, 0.3}, {0.5, 0.8}, {1, 0.8}} {
		if got := w.Confidence(tc.s); got != tc.want {
			t.Errorf("Confidence(%v) = %v, want %v", tc.s, got, tc.want)
		}
	}
	if !math.IsNaN((Weights{}).Confidence(0.5)) {
		t.Error("no table: want NaN")
	}
}

func TestParseWeights(t *testing.T) {
	if _, err := ParseWeights(weightsJSON); err != nil {
		t.Fatalf("embedded weights: %v", err)
	}
	for _, tc := range []struct{ name, json, want string }{
		{"unknown criterion", `{"structure":{"gap_box":1},"choice":{"no_such":1}}`, "no_such"},
		{"negative weight", `{"structure":{"gap_box":-1},"choice":{"elbow":1}}`, "gap_box"},
		{"one_mode outside stage 1", `{"structure":{"gap_box":1},"choice":{"one_mode":1}}`, "one_mode"},
		{"mixtures_agree outside stage 2", `{"structure":{"mixtures_agree":1},"choice":{"elbow":1}}`, "mixtures_agree"},
		{"no choice weights", `{"structure":{"gap_box":1}}`, "no choice"},
		{"calibration out of order", `{"structure":{"gap_box":1},"choice":{"elbow":1},"calibration":[{"support":0.5,"right":0.5},{"support":0.2,"right":0.6}]}`, "calibration point 1"},
		{"not JSON", `{`, "weights"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ParseWeights([]byte(tc.json))
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want one naming %q", err, tc.want)
			}
		})
	}
}

// TestStillImprovingAbstains: a criterion whose best value is at max-k found no optimum in the
// range; it abstains (StillImproving), counts as "several" in stage 1 and as edge weight in stage
// 2 exactly as an unmarked vote at max-k does, and is left out of the agreement of a verdict
// inside the range.
func TestStillImprovingAbstains(t *testing.T) {
	w := equalWeights()
	split := ModeCheck{N: 500, PValue: 0.001, Modes: true}
	plain := map[string]int{NameGapBox: 5, NameGapPCA: 5, NameBICGMM: 20, NameAICGMM: 20, NameSilhouette: 5,
		NameBICKMeans: 1, NameWard: 4}
	marked := votesOf(plain)
	for i := range marked {
		if marked[i].K == 20 {
			marked[i] = Vote{Criterion: marked[i].Criterion, Abstain: true, StillImproving: true}
		}
	}
	a, b := Decide(votesOf(plain), split, 1, 20, w), Decide(marked, split, 1, 20, w)
	if a.K != 5 || b.K != 5 || a.Support != b.Support || a.RunnerUp != b.RunnerUp {
		t.Fatalf("unmarked k=%d support %v runner-up %d; marked k=%d support %v runner-up %d; want both k = 5 and equal",
			a.K, a.Support, a.RunnerUp, b.K, b.Support, b.RunnerUp)
	}
	// Voting inside the range: gap_box, gap_pca, silhouette (5), bic_kmeans (1), ward (4).
	if want := 3.0 / 5; b.Agreement != want || slices.Contains(b.Disagree, NameBICGMM) {
		t.Errorf("agreement %v (disagree %v), want %v without the criteria still improving", b.Agreement, b.Disagree, want)
	}
	// When the edge outweighs every k inside, the verdict is max-k and they agree with it.
	edge := votesOf(map[string]int{NameGapBox: 3, NameSplitAgreement: 3})
	for _, c := range []string{NameBICGMM, NameAICGMM, NameBICKMeans} {
		edge[slices.IndexFunc(edge, func(v Vote) bool { return v.Criterion == c })] = Vote{Criterion: c, Abstain: true, StillImproving: true}
	}
	v := Decide(edge, split, 1, 20, w)
	if v.K != 20 || !v.AtMaxK || len(v.Agree) != 3 {
		t.Errorf("edge verdict k=%d at_max_k=%v agree %v; want 20, true, the three still improving", v.K, v.AtMaxK, v.Agree)
	}
}

// TestKneeInFirstThird: the elbow votes only for a knee in the first third of the range (see
// KneeInFirstThird for the measurement behind it).
func TestKneeInFirstThird(t *testing.T) {
	for _, tc := range []struct {
		k, minK, maxK int
		want          bool
	}{
		{2, 1, 6, true}, {3, 1, 6, false}, {4, 1, 12, true}, {5, 1, 12, false},
		{6, 1, 20, true}, {7, 1, 20, false}, {4, 2, 10, true}, {5, 2, 10, false},
	} {
		if got := KneeInFirstThird(tc.k, tc.minK, tc.maxK); got != tc.want {
			t.Errorf("KneeInFirstThird(%d, %d, %d) = %v, want %v", tc.k, tc.minK, tc.maxK, got, tc.want)
		}
	}
	// WCSS of three well-separated groups: a knee at 3, which max-k 6 cannot place and max-k 12 can.
	per := func(maxK int) []Scores {
		var out []Scores
		for k := 1; k <= maxK; k++ {
			w := []float64{100, 60}[min(k, 2)-1]
			if k >= 3 {
				w = 12 - 0.5*float64(k-3)
			}
			out = append(out, Scores{K: k, Valid: true, WCSS: w})
		}
		return out
	}
	for _, tc := range []struct {
		maxK    int
		abstain bool
	}{{6, true}, {12, false}} {
		opt := DefaultOptions()
		opt.MaxK = tc.maxK
		vs := votes(per(tc.maxK), 0, 1e6, 0, 2, opt)
		if v := vs[0]; v.Criterion != NameElbow || v.Abstain != tc.abstain || (!v.Abstain && v.K != 3) {
			t.Errorf("max-k %d: elbow vote %+v, want abstain=%v (else k = 3)", tc.maxK, v, tc.abstain)
		}
	}
}

func TestSharedK(t *testing.T) {
	for _, tc := range []struct {
		name  string
		votes map[string]int
		want  bool
	}{
		{"four on 5", map[string]int{NameElbow: 5, NameWard: 5, NameSilhouette: 5, NameDaviesBouldin: 5, NameGapBox: 1}, true},
		{"three on 5", map[string]int{NameElbow: 5, NameWard: 5, NameSilhouette: 5, NameDaviesBouldin: 6}, false},
		{"four on 2", map[string]int{NameElbow: 2, NameWard: 2, NameSilhouette: 2, NameDaviesBouldin: 2}, false},
		{"four at max-k", map[string]int{NameBICGMM: 20, NameAICGMM: 20, NameBICKMeans: 20, NameCalinskiHarabasz: 20}, false},
		{"scattered", map[string]int{NameElbow: 3, NameWard: 4, NameSilhouette: 5, NameDaviesBouldin: 6, NameGapBox: 7}, false},
	} {
		if got := SharedK(votesOf(tc.votes), 1, 20); got != tc.want {
			t.Errorf("%s: SharedK = %v, want %v", tc.name, got, tc.want)
		}
	}
	// shared_k's weight moves stage 1: the same votes give one group without it and several with it.
	w := equalWeights()
	vs := votesOf(map[string]int{NameGapBox: 1, NameGapPCA: 1, NameSplitAgreement: 1, NameBICKMeans: 10,
		NameSilhouette: 10, NameWard: 10, NameDaviesBouldin: 10})
	if v := Decide(vs, ModeCheck{}, 1, 20, w); v.K != 1 {
		t.Fatalf("without shared_k: k = %d, want 1", v.K)
	}
	w.Structure[NameSharedK] = 2.5
	if v := Decide(vs, ModeCheck{}, 1, 20, w); v.K != 10 {
		t.Errorf("with shared_k: k = %d, want 10", v.K)
	}
}

func TestMixturesAgree(t *testing.T) {
	for _, tc := range []struct {
		name  string
		votes map[string]int
		want  int
	}{
		{"all three on 8", map[string]int{NameBICGMM: 8, NameAICGMM: 8, NameICLGMM: 8, NameWard: 6}, 8},
		{"AIC runs on", map[string]int{NameBICGMM: 8, NameAICGMM: 10, NameICLGMM: 8}, 0},
		{"ICL abstains", map[string]int{NameBICGMM: 8, NameAICGMM: 8}, 0},
		{"all three say one group", map[string]int{NameBICGMM: 1, NameAICGMM: 1, NameICLGMM: 1}, 0},
		{"all three at max-k", map[string]int{NameBICGMM: 20, NameAICGMM: 20, NameICLGMM: 20}, 0},
	} {
		if got := MixturesAgree(votesOf(tc.votes), 1, 20); got != tc.want {
			t.Errorf("%s: MixturesAgree = %d, want %d", tc.name, got, tc.want)
		}
	}
	vs := votesOf(map[string]int{NameGapBox: 6, NameWard: 6, NameSilhouette: 6, NameSplitAgreement: 8,
		NameBICGMM: 8, NameAICGMM: 8, NameICLGMM: 8, NameBICKMeans: 5})
	// A still-improving vote is stored as an abstention with StillImproving (Vote's contract).
	atEdge := slices.Clone(vs)
	for i := range atEdge {
		if atEdge[i].Criterion == NameAICGMM {
			atEdge[i] = Vote{Criterion: NameAICGMM, Abstain: true, StillImproving: true}
		}
	}
	if got := MixturesAgree(atEdge, 1, 20); got != 0 {
		t.Errorf("AIC still improving: MixturesAgree = %d, want 0", got)
	}
	// Its weight moves stage 2: with equal weights 6 (four criteria) leads 8 (three); the derived
	// voter's weight of 2 puts 8 ahead.
	w := equalWeights()
	vs = votesOf(map[string]int{NameGapBox: 6, NameWard: 6, NameSilhouette: 6, NameDaviesBouldin: 6,
		NameBICGMM: 8, NameAICGMM: 8, NameICLGMM: 8, NameBICKMeans: 5})
	if v := Decide(vs, ModeCheck{N: 500, PValue: 0.001, Modes: true}, 1, 20, w); v.K != 6 {
		t.Fatalf("without mixtures_agree: k = %d, want 6", v.K)
	}
	w.Choice[NameMixturesAgree] = 2
	v := Decide(vs, ModeCheck{N: 500, PValue: 0.001, Modes: true}, 1, 20, w)
	if v.K != 8 {
		t.Errorf("with mixtures_agree: k = %d, want 8", v.K)
	}
	if !strings.Contains(v.Why, "(3 criteria)") || !strings.Contains(v.Why, "AIC, BIC and ICL agree") {
		t.Errorf("why %q: want the three criteria counted and the agreement named", v.Why)
	}
	if slices.Contains(v.Agree, NameMixturesAgree) {
		t.Errorf("agree %v: the derived voter is not a criterion", v.Agree)
	}
}

// TestMixtureLadderVotes: under the ladder (5,000 points in 32 dimensions carry a full mixture up
// to k = 4, GMMFullParams(5, 32) = 2804 needing 5,608), a minimum the full model gives at k = 4
// was only compared with spherical fits above it and has no say; one the spherical model gives at
// k = 5 is a vote, and its note names the spherical model; a full minimum below k = 4 is a vote.
func TestMixtureLadderVotes(t *testing.T) {
	opt := DefaultOptions()
	opt.MaxK = 6
	per := func(best int) []Scores {
		var out []Scores
		for k := 1; k <= 6; k++ {
			s := nanScores(k)
			s.Valid, s.WCSS, s.BICKMeans = true, 100/float64(k), 0
			s.BICGMM = math.Abs(float64(k - best))
			s.AICGMM, s.ICLGMM = s.BICGMM, s.BICGMM
			s.MixtureFamily = FamilyFull
			if k >= 5 {
				s.MixtureFamily = FamilySpherical
			}
			out = append(out, s)
		}
		return out
	}
	for _, tc := range []struct {
		best int
		want int    // 0: no say
		note string // what the note must contain
	}{
		{4, 0, "best at k = 4 with a full-covariance mixture"},
		{5, 5, "spherical Gaussian mixture"},
		{3, 3, "full-covariance Gaussian mixture"},
	} {
		vs := votes(per(tc.best), 0, 1e6, 5000, 32, opt)
		for _, name := range []string{NameBICGMM, NameAICGMM, NameICLGMM} {
			v := vs[slices.IndexFunc(vs, func(v Vote) bool { return v.Criterion == name })]
			if (tc.want == 0) != v.Abstain || (tc.want > 0 && v.K != tc.want) || !strings.Contains(v.Note, tc.note) {
				t.Errorf("best %d: %s vote %+v, want k = %d (0: no say) and a note with %q", tc.best, name, v, tc.want, tc.note)
			}
		}
	}
}

// TestMixtureVotesNeedRows: a mixture criterion's k = 1 has no say with fewer than rowsPerParam
// rows per parameter of a two-component full mixture (GMMFullParams(2, 32) = 1121, so 11,210
// rows), whatever the coreset holds (the penalty grows with the rows). Where the points (the
// smaller of the rows and the coreset's points) are at least ten per parameter of a full mixture
// at max-k (GMMFullParams(6, 32) = 3365, so 33,650 points) every k is scored by it; below that the
// spherical model is fitted too (mixtureLadder), and a k >= 2 is passed over only where even the
// spherical one has fewer than rowsPerParamAtK points per parameter (GMMSphericalParams(k, 32) =
// 34k - 1: 134 points at k = 2, 202 at 3, 270 at 4, 338 at 5). A best k that is the largest k
// left, with a larger k in the range, has no say (nothing larger could be compared). bic_kmeans,
// not a mixture, always votes.
func TestMixtureVotesNeedRows(t *testing.T) {
	per := func(best int) []Scores {
		var out []Scores
		for k := 1; k <= 6; k++ {
			s := nanScores(k)
			v := math.Abs(float64(k - best))
			s.Valid, s.WCSS, s.BICGMM, s.AICGMM, s.ICLGMM, s.BICKMeans = true, 100/float64(k), v, v, v, v
			out = append(out, s)
		}
		return out
	}
	opt := DefaultOptions()
	opt.MaxK = 6
	for _, tc := range []struct {
		best   int
		rows   float64
		points int
		want   int    // the mixture criteria's k, 0 for no say
		why    string // what the note of no say must contain
	}{
		{1, 11209, 0, 0, "11209 rows are fewer than 10 per parameter"},
		{1, 11210, 0, 1, ""},
		{1, 11210, 500, 1, ""}, // the spherical model fits every k on 500 points, and k = 1 has its rows
		{3, 1e6, 0, 3, ""},     // the full model fits every k: the minimum
		{3, 5000, 0, 3, ""},    // full thin from k = 5: every k scored by the families it carries
		{2, 6000, 0, 2, ""},
		{3, 1e6, 3363, 3, ""}, // the coreset's points decide, not the rows
		{2, 2241, 0, 2, ""},   // no full mixture at k >= 2, the spherical one at every k
		{3, 1e6, 300, 3, ""},  // spherical thin from k = 5; 3 is inside the k left
		{4, 1e6, 300, 0, "best at k = 4, the largest k whose mixture has at least 2 of its 300 coreset points per parameter (a 5-component spherical one has 169 parameters)"},
		{3, 1e6, 200, 0, "best at k = 2, the largest k"},           // k = 3 (202 points) passed over
		{3, 1e6, 133, 0, "best at k = 1, the largest k"},           // no k >= 2 fits
		{3, 133, 0, 0, "133 rows are fewer than 10 per parameter"}, // k = 1 left, and its own rule
	} {
		vs := votes(per(tc.best), 0, tc.rows, tc.points, 32, opt)
		for _, name := range []string{NameBICGMM, NameAICGMM, NameICLGMM} {
			v := vs[slices.IndexFunc(vs, func(v Vote) bool { return v.Criterion == name })]
			switch {
			case tc.want == 0 && !v.Abstain:
				t.Errorf("best %d, %v rows, %d points: %s votes %d, want no say", tc.best, tc.rows, tc.points, name, v.K)
			case tc.want == 0 && !strings.Contains(v.Note, tc.why):
				t.Errorf("best %d, %v rows, %d points: %s note %q, want it to say %q", tc.best, tc.rows, tc.points, name, v.Note, tc.why)
			case tc.want > 0 && (v.Abstain || v.K != tc.want):
				t.Errorf("best %d, %v rows, %d points: %s vote %+v, want k = %d", tc.best, tc.rows, tc.points, name, v, tc.want)
			}
		}
		if v := vs[slices.IndexFunc(vs, func(v Vote) bool { return v.Criterion == NameBICKMeans })]; v.Abstain || v.K != tc.best {
			t.Errorf("best %d, %v rows, %d points: bic_kmeans vote %+v, want k = %d", tc.best, tc.rows, tc.points, v, tc.best)
		}
	}
	// A minimum at the largest valid k is a choice when the k above it are invalid (empty clusters),
	// not passed over: only thin k make the largest k left "could not be compared".
	sc := per(4)
	sc[4].Valid, sc[5].Valid = false, false // k = 5 and 6
	vs := votes(sc, 0, 1e6, 0, 32, opt)
	if v := vs[slices.IndexFunc(vs, func(v Vote) bool { return v.Criterion == NameBICGMM })]; v.Abstain || v.K != 4 {
		t.Errorf("minimum at the largest valid k = 4 (k = 5, 6 invalid): bic_gmm vote %+v, want k = 4", v)
	}
}

// TestEdgeIncludesTheKBelowMaxK: in a range of 20 k, a likelihood criterion whose minimum is at
// max-k - 1 abstains as still improving (the fit at max-k may be a slightly worse optimum); in a
// range of 10 k only max-k itself is the edge, and a minimum two below max-k always votes.
func TestEdgeIncludesTheKBelowMaxK(t *testing.T) {
	for _, c := range []struct {
		maxK, best int
		still      bool
	}{
		{20, 20, true}, {20, 19, true}, {20, 18, false}, {10, 10, true}, {10, 9, false}, {40, 38, true}, {40, 37, false},
	} {
		per := make([]Scores, c.maxK)
		for i := range per {
			k := i + 1
			per[i] = nanScores(k)
			per[i].Valid = true
			per[i].BICGMM = math.Abs(float64(k - c.best)) // minimum at best
		}
		opt := DefaultOptions()
		opt.MaxK = c.maxK
		vs := VotesOf(per, 0, 1e6, 0, 4, opt)
		v := vs[slices.IndexFunc(vs, func(v Vote) bool { return v.Criterion == NameBICGMM })]
		if v.StillImproving != c.still || (!c.still && v.K != c.best) {
			t.Errorf("max-k %d, minimum at %d: vote %+v, want still improving %v", c.maxK, c.best, v, c.still)
		}
	}
}

// TestNearVotes: from k = 20 on, stage 2 counts the votes within a twentieth of k for it (nearK);
// below, each k stands alone.
func TestNearVotes(t *testing.T) {
	split := ModeCheck{N: 500, PValue: 0.001, Modes: true}
	// The votes of `kgauge estimate --max-k 110` on Fränti & Sieranoja's Birch2 (100 groups along
	// a sine curve; ../shared/data/README.md), embedded weights: counted one k at a time, 4
	// (both gap statistics and the split agreement) outweighs 100 (BIC, AICc; ICL names 95).
	birch2 := map[string]int{NameAICGMM: 100, NameBICGMM: 100, NameICLGMM: 95, NameDaviesBouldin: 80, NameElbow: 11,
		NameGapBox: 4, NameGapPCA: 4, NameSilhouette: 73, NameSimplifiedSilhouette: 79, NameSplitAgreement: 4, NameWard: 16}
	v := Decide(votesOf(birch2), split, 1, 110, DefaultWeights())
	if v.K != 100 || v.RunnerUp != 4 {
		t.Errorf("Birch2: k = %d, runner-up %d; want 100, runner-up 4", v.K, v.RunnerUp)
	}
	if !slices.Contains(v.Agree, NameICLGMM) || !strings.Contains(v.Why, "naming k = 95 to 105") {
		t.Errorf("Birch2: ICL's 95 not counted for 100: agree %v, why %q", v.Agree, v.Why)
	}
	if slices.Contains(v.Alternatives, 95) || v.RunnerUp == 95 {
		t.Errorf("Birch2: 95 is 100's own vote, not a rival: alternatives %v", v.Alternatives)
	}

	w := equalWeights()
	for _, tc := range []struct {
		name  string
		votes map[string]int
		maxK  int
		k     int
	}{
		{"below 20 each k stands alone",
			map[string]int{NameBICGMM: 10, NameAICGMM: 11, NameICLGMM: 9, NameGapBox: 4, NameGapPCA: 4}, 20, 4},
		{"at 40, 38 to 42 count together",
			map[string]int{NameBICGMM: 40, NameAICGMM: 41, NameICLGMM: 39, NameGapBox: 4, NameGapPCA: 4}, 60, 40},
		{"at 40, 43 is too far",
			map[string]int{NameBICGMM: 40, NameAICGMM: 43, NameICLGMM: 37, NameGapBox: 4, NameGapPCA: 4}, 60, 4},
		{"the k named most exactly wins among neighbours",
			map[string]int{NameBICGMM: 60, NameAICGMM: 60, NameICLGMM: 61}, 80, 60},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if v := Decide(votesOf(tc.votes), split, 1, tc.maxK, w); v.K != tc.k {
				t.Errorf("k = %d, want %d (why: %s)", v.K, tc.k, v.Why)
			}
		})
	}
}
