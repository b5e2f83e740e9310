package kgauge

import (
	"context"
	"encoding/json"
	"path/filepath"
	"sync"
	"testing"

	"github.com/kgauge/kgauge/bench/synth"
)

// TestConcurrentEstimates: two estimates running at once in one process (different files, seeds
// and worker counts) give exactly the results each gives alone: the library keeps no process-wide
// state (the collector's target and returning memory are cmd/kgauge's, issue 16).
func TestConcurrentEstimates(t *testing.T) {
	dir := t.TempDir()
	var paths [2]string
	for i := range paths {
		o := synth.DefaultMixtureOptions()
		o.Rows, o.Dims, o.K, o.RowGroup, o.Seed = 20_000, 5, 3+i, 4096, uint64(10+i)
		paths[i] = filepath.Join(dir, "m"+string(rune('a'+i))+".parquet")
		if err := synth.WriteMixture(paths[i], o); err != nil {
			t.Fatal(err)
		}
	}
	opts := [2]Options{}
	for i := range opts {
		o := DefaultOptions()
		o.Criteria.MaxK, o.Sketch.CoresetSize, o.Sketch.SampleSize = 6, 1000, 800
		o.Criteria.GapRefs, o.Criteria.GapSample, o.Criteria.Anchors = 2, 300, 100
		o.Workers, o.Seed = 1+i, uint64(7+i)
		opts[i] = o
	}
	run := func(i int) string {
		res, _, err := Estimate(context.Background(), []string{paths[i]}, opts[i])
		if err != nil {
			t.Error(err)
			return ""
		}
		res.Timings = Timings{}
		b, err := json.Marshal(res)
		if err != nil {
			t.Error(err)
		}
		return string(b)
	}
	var alone, together [2]string
	for i := range alone {
		alone[i] = run(i)
	}
	var wg sync.WaitGroup
	for i := range together {
		wg.Add(1)
		go func() {
			defer wg.Done()
			together[i] = run(i)
		}()
	}
	wg.Wait()
	for i := range alone {
		if alone[i] != together[i] {
			t.Errorf("estimate %d differs when run beside another:\nalone    %s\ntogether %s", i, alone[i], together[i])
		}
	}
}
