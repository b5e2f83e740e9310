package kgauge

import (
	"context"
	"path/filepath"
	"testing"

	"github.com/kgauge/kgauge/bench/synth"
)

// TestWorkloadCriteriaDims: the width the cost model prices the criteria at (Workload.CriteriaDims)
// is the width ReduceWide gives the criteria of the same input and options, with the reduction
// automatic, off and explicit.
func TestWorkloadCriteriaDims(t *testing.T) {
	path := filepath.Join(t.TempDir(), "wide.parquet")
	o := synth.DefaultMixtureOptions()
	o.Rows, o.Dims, o.K, o.RowGroup = 3000, 80, 4, 1000
	if err := synth.WriteMixture(path, o); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name   string
		reduce int
		narrow bool // the criteria run in fewer columns than the file's 80
	}{{"automatic", 0, true}, {"off", -1, false}, {"explicit 12", 12, true}} {
		t.Run(tc.name, func(t *testing.T) {
			opt := DefaultOptions()
			opt.Criteria.MaxK = 6
			opt.Reduce = tc.reduce
			w, err := PlanWorkload([]string{path}, opt)
			if err != nil {
				t.Fatal(err)
			}
			sk, _, _, err := Build(context.Background(), []string{path}, opt)
			if err != nil {
				t.Fatal(err)
			}
			sum, _ := Summarize(sk, opt.Scale)
			sum, _ = ReduceWide(sum, opt)
			if w.Dims != 80 || w.CriteriaDims != sum.D || (sum.D < 80) != tc.narrow {
				t.Errorf("workload prices %d of %d columns; ReduceWide gives the criteria %d", w.CriteriaDims, w.Dims, sum.D)
			}
		})
	}
}
