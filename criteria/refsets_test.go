package criteria_test

import (
	"context"
	"fmt"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

func voteLine(r *criteria.Result) string {
	var b strings.Builder
	for _, v := range r.Votes {
		if v.Abstain {
			fmt.Fprintf(&b, "%s=- ", v.Criterion)
		} else {
			fmt.Fprintf(&b, "%s=%d ", v.Criterion, v.K)
		}
	}
	return b.String()
}

// TestReferenceSetVerdicts checks the verdict on the benchmark sets with a published number of
// clusters (testdata/refsets/README.md): Ruspini 4 (Ruspini 1970; Kaufman & Rousseeuw 1990),
// S1 and S2 15 (Fränti & Virmajoki 2006), DIM032 and DIM064 16 (Fränti, Virmajoki & Hautamäki
// 2006), A1 20 (Kärkkäinen & Fränti 2002), each with the exact Summary (all points, weight 1).
func TestReferenceSetVerdicts(t *testing.T) {
	if testing.Short() {
		t.Skip("reference sets take several seconds")
	}
	tests := []struct {
		file string
		want int
		maxK int
	}{
		{"ruspini.csv", 4, 20},
		{"s1.txt", 15, 20},
		{"s2.txt", 15, 20},
		{"dim032.txt", 16, 20},
		{"dim064.txt", 16, 20},
		{"a1.txt", 20, 25},
		{"a2.txt", 35, 40},
		{"a3.txt", 50, 55},
	}
	for _, tc := range tests {
		t.Run(tc.file, func(t *testing.T) {
			p := mustLoad(t, "../testdata/refsets/"+tc.file)
			s := criteria.ExactSummary(p)
			opt := criteria.DefaultOptions()
			opt.MaxK = tc.maxK
			r, err := criteria.Evaluate(context.Background(), s, opt)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%s: verdict %d (agreement %.2f, runner-up %d); votes %s", tc.file, r.Verdict.K,
				r.Verdict.Agreement, r.Verdict.RunnerUp, voteLine(r))
			if r.Verdict.K != tc.want || !r.Verdict.Structure {
				t.Errorf("%s: verdict k=%d structure=%v, published k=%d", tc.file, r.Verdict.K, r.Verdict.Structure, tc.want)
			}
		})
	}
}

// lightweightCoreset draws m points with probability q(x) = 1/(2n) + d(x,mu)^2/(2 sum d^2) and
// weight 1/(m q(x)) (Bachem, Lucic & Krause 2018, "Scalable k-means clustering via lightweight
// coresets", KDD), the kind of weighted coreset the one-pass sketch hands to Evaluate.
func lightweightCoreset(p kmeans.Data, m int, rng *rand.Rand) kmeans.Data {
	n, d := p.Len(), p.D
	mu := make([]float64, d)
	for i := 0; i < n; i++ {
		for t, v := range p.Point(i) {
			mu[t] += v / float64(n)
		}
	}
	q := make([]float64, n)
	tot := 0.0
	for i := range q {
		q[i] = kmeans.Dist2(p.Point(i), mu)
		tot += q[i]
	}
	cum := make([]float64, n)
	acc := 0.0
	for i := range q {
		q[i] = 0.5/float64(n) + 0.5*q[i]/tot
		acc += q[i]
		cum[i] = acc
	}
	out := kmeans.Data{D: d, W: make([]float64, m)}
	for j := 0; j < m; j++ {
		i, _ := slices.BinarySearch(cum, rng.Float64()*acc)
		i = min(i, n-1)
		out.X = append(out.X, p.Point(i)...)
		out.W[j] = 1 / (float64(m) * q[i])
	}
	return out
}

// TestCoresetSummaryVerdict runs Evaluate the way the pipeline does: exact moments and box, a
// weighted lightweight coreset and a uniform sample instead of all points, on S1 (published k = 15,
// Fränti & Virmajoki 2006) and DIM032 (k = 16, Fränti, Virmajoki & Hautamäki 2006).
func TestCoresetSummaryVerdict(t *testing.T) {
	if testing.Short() {
		t.Skip("reference sets take several seconds")
	}
	for _, tc := range []struct {
		file string
		want int
	}{{"s1.txt", 15}, {"dim032.txt", 16}} {
		p := mustLoad(t, "../testdata/refsets/"+tc.file)
		rng := rand.New(rand.NewPCG(42, 1))
		s := criteria.ExactSummary(p)
		s.Coreset = lightweightCoreset(p, 800, rng)
		perm := rng.Perm(p.Len())[:500]
		s.Sample = kmeans.Data{D: p.D}
		for _, i := range perm {
			s.Sample.X = append(s.Sample.X, p.Point(i)...)
		}
		r, err := criteria.Evaluate(context.Background(), s, criteria.DefaultOptions())
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("%s coreset 800 / sample 500: verdict %d (agreement %.2f); votes %s", tc.file, r.Verdict.K, r.Verdict.Agreement, voteLine(r))
		if r.Verdict.K != tc.want {
			t.Errorf("%s from a coreset: verdict %d, published %d", tc.file, r.Verdict.K, tc.want)
		}
	}
}
