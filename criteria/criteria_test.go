package criteria_test

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

func TestOptionsValidate(t *testing.T) {
	tests := []struct {
		name string
		opt  criteria.Options
		want string // substring of the error, "" for none
	}{
		{"zero", criteria.Options{}, ""},
		{"default", criteria.DefaultOptions(), ""},
		{"range", criteria.Options{MinK: 5, MaxK: 3}, "criteria: max-k (3) < min-k (5)"},
		{"mink", criteria.Options{MinK: -1}, "min-k"},
		{"restarts", criteria.Options{Restarts: -2}, "restarts"},
		{"anchors", criteria.Options{Anchors: -1}, "anchors"},
		{"gaprefs", criteria.Options{GapRefs: -1}, "gap-refs"},
		{"gapsample", criteria.Options{GapSample: -1}, "gap-sample"},
		{"workers", criteria.Options{Workers: -1}, "workers"},
	}
	for _, tc := range tests {
		err := tc.opt.Validate()
		switch {
		case tc.want == "" && err != nil:
			t.Errorf("%s: unexpected error %v", tc.name, err)
		case tc.want != "" && (err == nil || !strings.Contains(err.Error(), tc.want)):
			t.Errorf("%s: error %v, want one containing %q", tc.name, err, tc.want)
		case err != nil && strings.Contains(err.Error(), "\n"):
			t.Errorf("%s: multi-line error %q", tc.name, err)
		}
	}
}

func TestKneedleHandChecked(t *testing.T) {
	// By hand from the Kneedle steps (Satopää et al. 2011) for y = 10, 4, 2, 1.5, 1.2, 1, 0.9, 0.8
	// at x = 1..8: x_n = i/7, y_n = (y - 0.8)/9.2, diff = 0, 0.509, 0.584, 0.495, 0.385, ...;
	// the first local maximum is i = 2 (x = 3), its threshold 0.584 - 1/7 = 0.441 is crossed at i = 4.
	x := []float64{1, 2, 3, 4, 5, 6, 7, 8}
	y := []float64{10, 4, 2, 1.5, 1.2, 1, 0.9, 0.8}
	diff := make([]float64, len(y))
	i, ok := criteria.Kneedle(x, y, 1, diff)
	if !ok || i != 2 {
		t.Fatalf("knee at %d (ok %v), want index 2", i, ok)
	}
	if math.Abs(diff[2]-(1-1.2/9.2-2.0/7)) > 1e-12 {
		t.Fatalf("diff[2] = %v", diff[2])
	}
	// A straight line has no knee.
	if _, ok := criteria.Kneedle(x, []float64{8, 7, 6, 5, 4, 3, 2, 1}, 1, nil); ok {
		t.Fatal("knee found on a straight line")
	}
}

func TestGapRuleHandChecked(t *testing.T) {
	tests := []struct {
		gap, s []float64
		want   int
	}{
		// Tibshirani et al. 2001: smallest k with Gap(k) >= Gap(k+1) - s(k+1).
		{[]float64{0.1, 0.5, 0.52, 0.3}, []float64{0, 0.05, 0.05, 0.05}, 1},
		{[]float64{0.3, 0.2, 0.1}, []float64{0.01, 0.01, 0.01}, 0},
		{[]float64{0.1, 0.2, 0.3}, []float64{0.01, 0.01, 0.01}, -1},
		{[]float64{math.NaN(), 0.2, 0.1}, []float64{0.01, 0.01, 0.01}, 1},
	}
	for i, tc := range tests {
		if got := criteria.GapRule(tc.gap, tc.s); got != tc.want {
			t.Errorf("case %d: GapRule = %d, want %d", i, got, tc.want)
		}
	}
}

func TestGapFlattensHandChecked(t *testing.T) {
	// The demo lake's gap_pca curve at seed 1 (k = 1..20, `kgauge synth --rows 500000 --partitions
	// 3`, 4 decimals): rises of 0.24, 0.34, 0.29, 0.21 up to k = 5, then at most 0.038.
	demo := []float64{1.3146, 1.5586, 1.8954, 2.1892, 2.4035, 2.4389, 2.4771, 2.4994, 2.5213, 2.5453,
		2.5611, 2.5701, 2.5752, 2.5809, 2.5869, 2.5922, 2.5951, 2.5998, 2.6047, 2.6086}
	steady := make([]float64, 20) // a gap rising by the same step all the way
	for i := range steady {
		steady[i] = 0.1 * float64(i)
	}
	tests := []struct {
		name string
		gap  []float64
		want int
	}{
		{"demo lake", demo, 4},
		{"steady rise", steady, -1},
		// The rise after index 2 is 0.125 at most, a fifth of 0.625 exactly (binary fractions): not under it.
		{"at the ratio", []float64{0, 0.125, 0.75, 0.875, 1, 1.125, 1.25, 1.375}, -1},
		{"under the ratio", []float64{0, 0.1, 0.6, 0.69, 0.75, 0.8, 0.85, 0.9}, 2},
		// Only four steps follow index 2: too short a tail to call flat.
		{"short tail", []float64{0, 0.1, 0.6, 0.61, 0.62, 0.63, 0.64}, -1},
		{"NaN before", []float64{math.NaN(), 0.1, 0.6, 0.61, 0.62, 0.63, 0.64, 0.65}, 2},
		{"falling", []float64{1, 0.9, 0.8, 0.7, 0.6, 0.5, 0.4}, -1},
	}
	for _, tc := range tests {
		if got := criteria.GapFlattens(tc.gap); got != tc.want {
			t.Errorf("%s: GapFlattens = %d, want %d", tc.name, got, tc.want)
		}
	}
}

func TestWardHandChecked(t *testing.T) {
	// 1-D points 0, 1, 10: merge {0,1} at cost 1*1/2*1 = 0.5, then {0,1} (mean 0.5, n 2) with 10 at
	// 2*1/3*9.5^2 = 60.1666... (Ward 1963 merge cost).
	m := criteria.WardLinkage(kmeans.Data{X: []float64{0, 1, 10}, D: 1})
	if len(m) != 2 || m[0].A != 0 || m[0].B != 1 || math.Abs(m[0].Cost-0.5) > 1e-12 ||
		m[1].A != 2 || m[1].B != 3 || math.Abs(m[1].Cost-2.0/3*9.5*9.5) > 1e-12 {
		t.Fatalf("merges %+v", m)
	}
	// A weight-2 point is two coincident points: {0 (w 2), 3} costs 2*1/3*9 = 6, as does the second
	// merge of {0, 0, 3}.
	w := criteria.WardLinkage(kmeans.Data{X: []float64{0, 3}, W: []float64{2, 1}, D: 1})
	u := criteria.WardLinkage(kmeans.Data{X: []float64{0, 0, 3}, D: 1})
	if len(w) != 1 || math.Abs(w[0].Cost-6) > 1e-12 || math.Abs(u[1].Cost-6) > 1e-12 || u[0].Cost != 0 {
		t.Fatalf("weighted %+v, unweighted %+v", w, u)
	}
}

func TestBICKMeansHandChecked(t *testing.T) {
	// R = 4, K = 2, M = 1, sizes 2, 2, WCSS 1 (the dimension-consistent X-means variant):
	// sigma^2 = 1/(1*2) = 0.5; l = 4 ln(1/2) - 2 ln(pi) - 1; p = 4; BIC = -2 l + 4 ln 4.
	l := 4*math.Log(0.5) - 2*math.Log(math.Pi) - 1
	want := -2*l + 4*math.Log(4)
	if got := criteria.BICKMeans([]float64{2, 2}, 1, 1); math.Abs(got-want) > 1e-12 {
		t.Fatalf("BICKMeans = %v, want %v", got, want)
	}
	if got := criteria.BICKMeans([]float64{2, 0}, 1, 1); !math.IsNaN(got) {
		t.Fatalf("empty cluster: %v, want NaN", got)
	}
}

func TestSilhouetteAnchorsInterval(t *testing.T) {
	// The stratified estimate with 150 anchors must bracket the exact mean silhouette (Rousseeuw
	// 1987) in most seeds: a nominal 95% interval, checked over 40 seeds (>= 32 hits).
	p := mixture(3, 1200, 3, 4, 3)
	fit := kmeans.Fit(p, 4, kmeans.FitOptions{Restarts: 3, Rand: rand.New(rand.NewPCG(1, 1))})
	exact := criteria.SilhouetteExact(p, fit.Labels, 4)
	hits := 0
	for seed := uint64(0); seed < 40; seed++ {
		e := criteria.SilhouetteAnchors(p, fit.Labels, 4, 150, rand.New(rand.NewPCG(seed, 5)))
		if !(e.SE > 0) || e.Anchors < 150 {
			t.Fatalf("estimate %+v", e)
		}
		if e.Lo <= exact && exact <= e.Hi {
			hits++
		}
	}
	if hits < 32 {
		t.Fatalf("95%% interval covered the exact silhouette %.4f in %d/40 seeds", exact, hits)
	}
	// k = 1: undefined.
	one := make([]int32, p.Len())
	if e := criteria.SilhouetteAnchors(p, one, 1, 100, rand.New(rand.NewPCG(1, 1))); !math.IsNaN(e.Mean) {
		t.Fatalf("k=1 silhouette %v, want NaN", e.Mean)
	}
}

func TestSingletonSilhouette(t *testing.T) {
	// Rousseeuw (1987): s(i) = 0 for the point of a singleton cluster. Points 0, 1 (cluster 0) and
	// 10 (cluster 1): s(0) = (10-1)/10, s(1) = (9-1)/9, s(10) = 0.
	p := kmeans.Data{X: []float64{0, 1, 10}, D: 1}
	want := (0.9 + 8.0/9 + 0) / 3
	if got := criteria.SilhouetteExact(p, []int32{0, 0, 1}, 2); math.Abs(got-want) > 1e-12 {
		t.Fatalf("silhouette %v, want %v", got, want)
	}
}

func evalJSON(t *testing.T, s criteria.Summary, opt criteria.Options) (*criteria.Result, string) {
	t.Helper()
	r, err := criteria.Evaluate(context.Background(), s, opt)
	if err != nil {
		t.Fatal(err)
	}
	b, err := json.Marshal(r)
	if err != nil {
		t.Fatal(err)
	}
	return r, string(b)
}

// sameForWorkers evaluates s with each number of workers, fails unless every result marshals to
// the same JSON, and returns the results and that JSON.
func sameForWorkers(t *testing.T, s criteria.Summary, opt criteria.Options, workers ...int) ([]*criteria.Result, string) {
	t.Helper()
	var out []*criteria.Result
	var first string
	for _, w := range workers {
		opt.Workers = w
		r, j := evalJSON(t, s, opt)
		if first == "" {
			first = j
		} else if j != first {
			t.Fatalf("workers=%d gives a different result", w)
		}
		out = append(out, r)
	}
	return out, first
}

func TestEvaluateIndependentOfWorkers(t *testing.T) {
	s := criteria.ExactSummary(mixture(7, 600, 4, 3, 4))
	opt := criteria.DefaultOptions()
	opt.MaxK = 8
	opt.Anchors = 200
	_, first := sameForWorkers(t, s, opt, 1, 2, 3)
	// A different seed changes the Monte Carlo parts.
	opt.Workers, opt.Seed = 1, 99
	if _, j := evalJSON(t, s, opt); strings.Replace(j, `"seed":99`, `"seed":1`, 1) == first {
		t.Fatal("seed has no effect")
	}
}

func TestScoresJSONNull(t *testing.T) {
	s := criteria.ExactSummary(mixture(7, 300, 2, 3, 5))
	opt := criteria.DefaultOptions()
	opt.MaxK = 4
	r, _ := evalJSON(t, s, opt)
	b, err := json.Marshal(r.PerK[0])
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	if v, ok := m["silhouette"]; !ok || v != nil {
		t.Fatalf("k=1 silhouette marshalled as %v, want null", v)
	}
	if v, ok := m["wcss"].(float64); !ok || v <= 0 {
		t.Fatalf("k=1 wcss %v", m["wcss"])
	}
}

func TestEvaluateDegenerate(t *testing.T) {
	ruspini := mustLoad(t, "../testdata/refsets/ruspini.csv")
	widen := func(f func(x, y float64) float64) kmeans.Data {
		var x []float64
		for i := 0; i < ruspini.Len(); i++ {
			a, b := ruspini.X[2*i], ruspini.X[2*i+1]
			x = append(x, a, b, f(a, b))
		}
		return kmeans.Data{X: x, D: 3}
	}
	opt := criteria.DefaultOptions()
	opt.MaxK = 8

	t.Run("identical", func(t *testing.T) {
		p := kmeans.Data{X: make([]float64, 50*3), D: 3}
		for i := range p.X {
			p.X[i] = 7
		}
		r, _ := evalJSON(t, criteria.ExactSummary(p), opt)
		if r.Verdict.K != 1 || r.Verdict.Structure {
			t.Fatalf("verdict %+v", r.Verdict)
		}
		for _, v := range r.Votes {
			if !v.Abstain {
				t.Fatalf("vote %+v on identical points", v)
			}
		}
		if !math.IsNaN(r.PerK[1].Silhouette) || r.PerK[1].WCSS != 0 {
			t.Fatalf("scores %+v", r.PerK[1])
		}
	})
	t.Run("fewer distinct than k", func(t *testing.T) {
		var x []float64
		for i := 0; i < 30; i++ {
			x = append(x, []float64{0, 0, 5, 0, 0, 5}[2*(i%3):2*(i%3)+2]...)
		}
		r, _ := evalJSON(t, criteria.ExactSummary(kmeans.Data{X: x, D: 2}), opt)
		for _, s := range r.PerK[3:] { // k >= 4: more centres than distinct points
			if s.Valid || !math.IsNaN(s.Silhouette) || !math.IsNaN(s.BICGMM) {
				t.Fatalf("k=%d: %+v", s.K, s)
			}
		}
		for _, v := range r.Votes {
			if !v.Abstain && v.K > 3 {
				t.Fatalf("vote %+v for k above the number of distinct points", v)
			}
		}
	})
	t.Run("constant column", func(t *testing.T) {
		r, _ := evalJSON(t, criteria.ExactSummary(widen(func(x, y float64) float64 { return 3 })), opt)
		if r.Verdict.K != 4 {
			t.Fatalf("Ruspini + constant column: verdict %d, want 4 (Kaufman & Rousseeuw 1990)", r.Verdict.K)
		}
	})
	t.Run("collinear column", func(t *testing.T) {
		r, _ := evalJSON(t, criteria.ExactSummary(widen(func(x, y float64) float64 { return 2*x - y })), opt)
		if r.Verdict.K != 4 {
			t.Fatalf("Ruspini + collinear column: verdict %d, want 4 (Kaufman & Rousseeuw 1990)", r.Verdict.K)
		}
	})
}

func TestEvaluateErrors(t *testing.T) {
	good := criteria.ExactSummary(mixture(1, 50, 2, 2, 3))
	bad := good
	bad.Mean = bad.Mean[:1]
	if _, err := criteria.Evaluate(context.Background(), bad, criteria.Options{}); !errors.Is(err, criteria.ErrBadSummary) {
		t.Fatalf("bad summary: %v", err)
	}
	if _, err := criteria.Evaluate(context.Background(), good, criteria.Options{MinK: 4, MaxK: 2}); err == nil ||
		!strings.HasPrefix(err.Error(), "criteria: ") {
		t.Fatalf("bad options: %v", err)
	}
	nan := good
	nan.Coreset.X = append([]float64(nil), good.Coreset.X...)
	nan.Coreset.X[3] = math.NaN()
	if _, err := criteria.Evaluate(context.Background(), nan, criteria.Options{}); err == nil {
		t.Fatal("NaN coreset accepted")
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := criteria.Evaluate(ctx, good, criteria.Options{}); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled: %v", err)
	}
	// Seed centres of the wrong length are ignored, not a crash.
	good.Seeds = map[int][]float64{2: {1, 2, 3}}
	if _, err := criteria.Evaluate(context.Background(), good, criteria.Options{MaxK: 4}); err != nil {
		t.Fatal(err)
	}
}

func TestWeightedCoresetMatchesDuplicates(t *testing.T) {
	// A coreset point of weight 2 stands for two rows: for the weighted criteria that do not
	// exclude the anchor itself (CH, DB, simplified silhouette, GMM log-likelihood) a weight-2
	// point must equal two copies.
	p := mixture(5, 60, 2, 3, 4)
	w := make([]float64, p.Len())
	var dup []float64
	for i := range w {
		w[i] = float64(1 + i%2)
		for c := 0; c < int(w[i]); c++ {
			dup = append(dup, p.Point(i)...)
		}
	}
	pw := kmeans.Data{X: p.X, W: w, D: 2}
	pd := kmeans.Data{X: dup, D: 2}
	fit := kmeans.Fit(pw, 3, kmeans.FitOptions{Restarts: 2})
	lab := kmeans.Data{X: fit.Centres, D: 2}
	_ = lab
	labels := make([]int32, pd.Len())
	kmeans.Assign(pd.X, 2, fit.Centres, labels, nil)
	type pair struct {
		name string
		a, b float64
	}
	for _, c := range []pair{
		{"ch", criteria.CalinskiHarabasz(pw, fit.Labels, 3), criteria.CalinskiHarabasz(pd, labels, 3)},
		{"db", criteria.DaviesBouldin(pw, fit.Labels, 3), criteria.DaviesBouldin(pd, labels, 3)},
		{"ss", criteria.SimplifiedSilhouette(pw, fit.Labels, fit.Centres), criteria.SimplifiedSilhouette(pd, labels, fit.Centres)},
	} {
		if math.Abs(c.a-c.b) > 1e-9*math.Abs(c.b) {
			t.Errorf("%s: weighted %v, duplicated %v", c.name, c.a, c.b)
		}
	}
}

func TestEvaluateUsesSeedsAndNoSample(t *testing.T) {
	// Seed centres (as from the pass's mini-batch k-means) are tried: the chosen fit can be no
	// worse than Lloyd started from them. Without a sample the gap data side comes from the coreset.
	p := mixture(11, 400, 3, 4, 6)
	s := criteria.ExactSummary(p)
	seed := kmeans.PlusPlus(p, 4, rand.New(rand.NewPCG(3, 3)), nil)
	ref := kmeans.Lloyd(p, seed, kmeans.LloydOptions{})
	s.Seeds = map[int][]float64{4: seed}
	s.Sample = kmeans.Data{}
	opt := criteria.DefaultOptions()
	opt.MaxK, opt.Restarts = 6, 1
	r, err := criteria.Evaluate(context.Background(), s, opt)
	if err != nil {
		t.Fatal(err)
	}
	if got := r.Fits[3].Cost; got > ref.Cost*(1+1e-12) {
		t.Fatalf("k=4 fit cost %v > Lloyd from the seed %v", got, ref.Cost)
	}
	if math.IsNaN(r.PerK[3].GapBox) || math.IsNaN(r.PerK[3].GapPCA) {
		t.Fatalf("gap undefined without a sample: %+v", r.PerK[3])
	}
}

func TestGapNullIsNearZero(t *testing.T) {
	// Under the uniform null the expected gap is 0 for every k (Tibshirani, Walther & Hastie 2001,
	// sec. 4): data uniform in the unit square against the box reference.
	rng := rand.New(rand.NewPCG(8, 8))
	x := make([]float64, 2*500)
	for i := range x {
		x[i] = rng.Float64()
	}
	data := kmeans.Data{X: x, D: 2}
	refs := criteria.BoxReference([]float64{0, 0}, []float64{1, 1}, 500, 20, rng)
	for k := 1; k <= 4; k++ {
		g := criteria.GapAt(data, refs, k, 2, rand.New(rand.NewPCG(9, uint64(k))))
		if math.Abs(g.Gap) > 0.1 || !(g.S > 0) {
			t.Errorf("k=%d: Gap %v s %v under the null", k, g.Gap, g.S)
		}
	}
}

// TestMixturesStop: on three separated groups and k = 1..14 the mixtures are fitted from k = 1 up
// until BIC and ICL have settled past their minimum at 3 (at least four k later), not beyond; the
// scores above the stop are NaN, bic_gmm and icl_gmm still name 3, and the stop does not depend
// on the workers.
func TestMixturesStop(t *testing.T) {
	s := criteria.ExactSummary(mixture(11, 400, 3, 3, 8))
	opt := criteria.DefaultOptions()
	opt.MaxK, opt.Anchors = 14, 200
	results, _ := sameForWorkers(t, s, opt, 1, 2)
	for _, r := range results {
		stop := r.MixturesStopAt
		if stop < 3+4 || stop >= opt.MaxK {
			t.Fatalf("mixtures stopped at k = %d, want 7..%d", stop, opt.MaxK-1)
		}
		for _, sc := range r.PerK {
			if fitted := !math.IsNaN(sc.BICGMM); fitted != (sc.K <= stop) {
				t.Errorf("k = %d: BIC %v with the mixtures stopped at %d", sc.K, sc.BICGMM, stop)
			}
		}
		for _, v := range r.Votes {
			if (v.Criterion == criteria.NameBICGMM || v.Criterion == criteria.NameICLGMM) && v.K != 3 {
				t.Errorf("%s votes %d, want 3 (%s)", v.Criterion, v.K, v.Note)
			}
		}
	}
}
