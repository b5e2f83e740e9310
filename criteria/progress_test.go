package criteria_test

import (
	"context"
	"encoding/json"
	"errors"
	"sync/atomic"
	"testing"

	"github.com/kgauge/kgauge/criteria"
)

// TestEvaluateProgress checks Options.Progress: calls never overlap, done never decreases and
// stays within a fixed total, the last call reports the whole total, no single step carries more
// than a quarter of the work (a bar driven by it moves in many steps, not 99% at once), and
// the result is the same as without a hook, for one and two workers.
func TestEvaluateProgress(t *testing.T) {
	s := criteria.ExactSummary(mixture(7, 1000, 6, 4, 5))
	opt := criteria.DefaultOptions()
	opt.MaxK = 10
	opt.Anchors = 200
	plain, err := criteria.Evaluate(context.Background(), s, opt)
	if err != nil {
		t.Fatal(err)
	}
	want, _ := json.Marshal(plain)
	for _, workers := range []int{1, 2} {
		var inCall atomic.Int32
		var dones []float64
		total0 := -1.0
		o := opt
		o.Workers = workers
		o.Progress = func(done, total float64) {
			if inCall.Add(1) != 1 {
				t.Error("overlapping Progress calls")
			}
			defer inCall.Add(-1)
			if total0 < 0 {
				total0 = total
			}
			if total != total0 || !(total > 0) {
				t.Errorf("total changed from %v to %v", total0, total)
			}
			if n := len(dones); n > 0 && done < dones[n-1] {
				t.Errorf("done went back from %v to %v", dones[n-1], done)
			}
			if done > total {
				t.Errorf("done %v above total %v", done, total)
			}
			dones = append(dones, done)
		}
		r, err := criteria.Evaluate(context.Background(), s, o)
		if err != nil {
			t.Fatal(err)
		}
		if got, _ := json.Marshal(r); string(got) != string(want) {
			t.Errorf("workers=%d: the result with a Progress hook differs from the one without", workers)
		}
		if len(dones) < 10 {
			t.Fatalf("workers=%d: %d Progress calls, want many (one per unit of work)", workers, len(dones))
		}
		if last := dones[len(dones)-1]; last != total0 {
			t.Errorf("workers=%d: last call done=%v, want total %v", workers, last, total0)
		}
		prev := 0.0
		for _, d := range dones {
			if d-prev > 0.25*total0 {
				t.Errorf("workers=%d: one step carries %.0f%% of the work", workers, 100*(d-prev)/total0)
			}
			prev = d
		}
	}
}

// TestEvaluateProgressCancelled checks that a cancelled Evaluate stops reporting short of the
// total and returns the context's error.
func TestEvaluateProgressCancelled(t *testing.T) {
	s := criteria.ExactSummary(mixture(7, 1000, 6, 4, 5))
	opt := criteria.DefaultOptions()
	opt.MaxK = 10
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var last, total float64
	opt.Progress = func(d, tot float64) {
		last, total = d, tot
		if d > 0.3*tot {
			cancel()
		}
	}
	if _, err := criteria.Evaluate(ctx, s, opt); !errors.Is(err, context.Canceled) {
		t.Fatalf("err = %v, want context.Canceled", err)
	}
	if !(last < total) {
		t.Errorf("cancelled run reported done=%v of %v", last, total)
	}
}
