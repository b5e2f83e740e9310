package kgauge

import (
	"context"
	"fmt"
	"path/filepath"
	"testing"

	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/criteria"
)

// BenchmarkCriteriaStage times the criteria stage alone (Summarize and criteria.Evaluate, as
// Evaluate runs them) on the sketch of a 200,000-row mixture of 10 clusters with the default
// sketch sizes, for the shapes issue 15 sets goals on (and 40 columns, the width the reduction
// gives 512 columns at max-k 20). The pass runs once per shape, untimed.
func BenchmarkCriteriaStage(b *testing.B) {
	for _, c := range []struct{ dims, maxK int }{{16, 20}, {64, 20}, {16, 50}, {40, 20}} {
		b.Run(fmt.Sprintf("d=%d/maxk=%d", c.dims, c.maxK), func(b *testing.B) {
			path := filepath.Join(b.TempDir(), "mix.parquet")
			o := synth.DefaultMixtureOptions()
			o.Rows, o.Dims, o.Compression = 200_000, c.dims, synth.None
			if err := synth.WriteMixture(path, o); err != nil {
				b.Fatal(err)
			}
			opt := DefaultOptions()
			opt.Criteria.MaxK = c.maxK
			opt = opt.withDefaults()
			sk, _, _, err := Build(context.Background(), []string{path}, opt)
			if err != nil {
				b.Fatal(err)
			}
			for b.Loop() {
				sum, _ := Summarize(sk, opt.Scale)
				r, err := criteria.Evaluate(context.Background(), sum, opt.Criteria)
				if err != nil {
					b.Fatal(err)
				}
				if r.Verdict.K != o.K {
					b.Fatalf("verdict k = %d, want %d", r.Verdict.K, o.K)
				}
			}
		})
	}
}
