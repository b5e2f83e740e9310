package capacity

import (
	"context"
	"errors"
	"strings"
	"testing"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/cost"
)

// TestPlanFiguresAgree: plan (without its timed probe), the figures cmd/kgauge shows before and
// after an estimate (the progress bar's first ETA and the report's planned column, both from
// PlanWorkload priced by cost.Predict) and --memory's check are one computation, so they agree
// exactly (issue 16 asks for 10%), with and without a --memory bound that shrinks the sizes; and a
// --memory below the minimum is refused by plan and estimate alike, before any row is read, with
// the same figure.
func TestPlanFiguresAgree(t *testing.T) {
	path := smallMixture(t, 60_000, 4096)
	ctx := context.Background()
	base := kgauge.DefaultOptions()
	base.Workers = 2
	free, err := Forecast(ctx, []string{path}, base, false)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name   string
		memory int64
	}{{"no bound", 0}, {"bound at the peak", free.PeakBytes}, {"bound below the peak", free.PeakBytes - free.Memory.Live/4}} {
		t.Run(tc.name, func(t *testing.T) {
			opt := base
			opt.Memory = tc.memory
			plan, err := Forecast(ctx, []string{path}, opt, false)
			if err != nil {
				t.Fatal(err)
			}
			w, err := kgauge.PlanWorkload([]string{path}, opt)
			if err != nil {
				t.Fatal(err)
			}
			pre := cost.Predict(w, cost.Default())
			if pre.Seconds != plan.Seconds || pre.PeakBytes != plan.PeakBytes {
				t.Errorf("estimate's preflight %.3f s, %d B; plan %.3f s, %d B", pre.Seconds, pre.PeakBytes, plan.Seconds, plan.PeakBytes)
			}
			if tc.memory > 0 && plan.PeakBytes > tc.memory {
				t.Errorf("plan under --memory %d predicts a peak of %d", tc.memory, plan.PeakBytes)
			}
			if tc.memory == free.PeakBytes && plan.Workload != free.Workload {
				t.Errorf("--memory at the predicted peak changed the sizes: %+v, was %+v", plan.Workload, free.Workload)
			}
			if tc.memory > 0 && tc.memory < free.PeakBytes && plan.Workload == free.Workload {
				t.Errorf("--memory below the predicted peak changed no size")
			}
		})
	}
	opt := base
	opt.Memory = 1 << 20
	_, perr := Forecast(ctx, []string{path}, opt, false)
	_, _, eerr := kgauge.Estimate(ctx, []string{path}, opt)
	if !errors.Is(perr, kgauge.ErrMemoryLimit) || !errors.Is(eerr, kgauge.ErrMemoryLimit) {
		t.Fatalf("--memory 1MiB: plan %v, estimate %v; want both refused", perr, eerr)
	}
	if perr.Error() != eerr.Error() || !strings.Contains(perr.Error(), "at least") {
		t.Errorf("plan says %q, estimate %q; want the same figure", perr, eerr)
	}
}
