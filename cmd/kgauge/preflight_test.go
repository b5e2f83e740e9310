package main

import (
	"context"
	"math"
	"path/filepath"
	"testing"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
)

// TestPreflightFiguresAgree: the progress bar's first ETA and the report's planned figures (both
// from planFor) are the plan's own time and peak (what "kgauge plan" prints first, with and without
// --no-probe), for the same inputs and flags, with and without --memory (issue 16 asks for 10%; they are
// one computation).
func TestPreflightFiguresAgree(t *testing.T) {
	path := filepath.Join(t.TempDir(), "m.parquet")
	o := synth.DefaultMixtureOptions()
	o.Rows, o.Dims, o.K, o.RowGroup = 30_000, 8, 3, 4096
	if err := synth.WriteMixture(path, o); err != nil {
		t.Fatal(err)
	}
	for _, memory := range []int64{0, 90 << 20} {
		opt := kgauge.DefaultOptions()
		opt.Workers, opt.Memory = 2, memory
		_, pred := planFor([]string{path}, opt)
		if pred == nil {
			t.Fatalf("--memory %d: planFor priced nothing", memory)
		}
		plan, err := forecast(context.Background(), []string{path}, opt, memory == 0)
		if err != nil {
			t.Fatal(err)
		}
		eta := progressETA(pred.Terms, progressNow{stage: kgauge.StageOpen})
		for _, c := range []struct {
			name      string
			got, want float64
		}{{"first ETA", eta, plan.Seconds}, {"report's planned seconds", pred.Seconds, plan.Seconds},
			{"report's planned peak", float64(pred.PeakBytes), float64(plan.PeakBytes)}} {
			if math.Abs(c.got-c.want) > 0.1*c.want {
				t.Errorf("--memory %d: %s %v, plan %v", memory, c.name, c.got, c.want)
			}
		}
	}
}
