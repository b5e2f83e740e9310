package main

import (
	"math"
	"testing"

	"github.com/kgauge/kgauge/cost"
)

// TestFitPass: passes made up from known overheads give those overheads back, and passes whose
// difference noise has reversed fall back to one ratio for both parts.
func TestFitPass(t *testing.T) {
	cal := cost.Calibration{OpenUnitSeconds: 0.001, ScanBytesPerSec: 1e9, AddSecPerValue: 2e-9, KernelPKDPerSec: 1e9, Cores: 2}
	w1 := cost.Workload{Files: 1, Units: 30, Rows: 2_000_000, Bytes: 256_000_000, Dims: 16, Workers: 2, MinK: 1, MaxK: 20,
		MiniBatchRows: 1 << 17}
	w2 := w1.Scaled(4)
	one := func(w cost.Workload) cost.Terms {
		w.Workers = 1
		return cost.Predict(w, cal).Terms
	}
	t1, t2 := one(w1), one(w2)
	for _, tc := range []struct{ grow, fixed float64 }{{1.7, 0.5}, {0.3, 2}, {1, 1}} {
		p1 := tc.grow*(t1.Scan+t1.Sketch) + tc.fixed*t1.Feed
		p2 := tc.grow*(t2.Scan+t2.Sketch) + tc.fixed*t2.Feed
		g, f := fitPass(cal, w1, w2, p1, p2)
		if math.Abs(g-tc.grow) > 1e-9 || math.Abs(f-tc.fixed) > 1e-9 {
			t.Errorf("overheads %v and %v fitted as %v and %v", tc.grow, tc.fixed, g, f)
		}
		// The fitted calibration reproduces both passes.
		c := cal
		c.PassOverhead, c.FeedOverhead = g, f
		w := w2
		w.Workers = 1
		if got := cost.Predict(w, c).Terms.Pass; math.Abs(got-p2) > 1e-9*p2 {
			t.Errorf("fitted pass over the larger file %v, measured %v", got, p2)
		}
	}
	// The larger file's pass measured shorter than the smaller's: one ratio for both.
	g, f := fitPass(cal, w1, w2, 2, 1.5)
	if want := 3.5 / (t1.Scan + t1.Sketch + t2.Scan + t2.Sketch + 2*t1.Feed); g != f || math.Abs(g-want) > 1e-12 {
		t.Errorf("reversed passes: overheads %v and %v, want both %v", g, f, want)
	}
}
