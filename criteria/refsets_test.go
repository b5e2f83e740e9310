package criteria_test

import (
	"context"
	"fmt"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/criteria"
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
