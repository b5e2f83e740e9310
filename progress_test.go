package kgauge

import (
	"context"
	"math/rand/v2"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/kgauge/kgauge/bench/synth"
)

// TestProgressStages: an estimate moves Progress through every stage in order, reads every row,
// and ends with the criteria's share at 1; the share never goes back while the criteria run.
func TestProgressStages(t *testing.T) {
	path := filepath.Join(t.TempDir(), "m.parquet")
	o := synth.DefaultMixtureOptions()
	o.Rows, o.Dims, o.K, o.RowGroup = 20_000, 4, 3, 4096
	if err := synth.WriteMixture(path, o); err != nil {
		t.Fatal(err)
	}
	opt := DefaultOptions()
	opt.Criteria.MaxK, opt.Sketch.CoresetSize, opt.Sketch.SampleSize = 6, 1000, 800
	opt.Criteria.GapRefs, opt.Criteria.GapSample, opt.Criteria.Anchors = 2, 300, 100
	opt.Progress = &Progress{}
	var seen []Stage
	var shares []float64
	stop := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		for {
			if s := opt.Progress.Stage(); len(seen) == 0 || seen[len(seen)-1] != s {
				seen = append(seen, s)
			}
			if opt.Progress.Stage() == StageCriteria {
				shares = append(shares, opt.Progress.CriteriaShare())
			}
			select {
			case <-stop:
				return
			case <-time.After(time.Millisecond):
			}
		}
	}()
	_, _, err := Estimate(context.Background(), []string{path}, opt)
	close(stop)
	wg.Wait()
	if err != nil {
		t.Fatal(err)
	}
	p := opt.Progress
	if p.Stage() != StageDone || p.Rows.Load() != int64(o.Rows) || p.TotalRows.Load() != int64(o.Rows) || p.CriteriaShare() != 1 {
		t.Errorf("at the end: stage %q, rows %d of %d, criteria share %v; want done, %d of %d, 1",
			p.Stage(), p.Rows.Load(), p.TotalRows.Load(), p.CriteriaShare(), o.Rows, o.Rows)
	}
	order := map[Stage]int{"": 0, StageOpen: 1, StageProbe: 2, StagePass: 3, StageCriteria: 4, StageDone: 5}
	for i := 1; i < len(seen); i++ {
		if order[seen[i]] <= order[seen[i-1]] {
			t.Errorf("stages seen out of order: %v", seen)
			break
		}
	}
	for i := 1; i < len(shares); i++ {
		if shares[i] < shares[i-1] {
			t.Errorf("the criteria share went back from %v to %v", shares[i-1], shares[i])
			break
		}
	}
}

// TestScoredShareMonotone: concurrent reports arriving out of order never move the share back,
// and the share stays within [0, 1].
func TestScoredShareMonotone(t *testing.T) {
	var p Progress
	var wg sync.WaitGroup
	for g := range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			rng := rand.New(rand.NewPCG(uint64(g), 1))
			for range 1000 {
				p.scoredShare(rng.Float64()*120, 100)
			}
		}()
	}
	wg.Wait()
	if got := p.CriteriaShare(); got != 1 {
		t.Errorf("share %v after reports above the total, want 1", got)
	}
	var q Progress
	q.scoredShare(30, 100)
	q.scoredShare(10, 100)
	q.scoredShare(5, 0)
	if got := q.CriteriaShare(); got != 0.3 {
		t.Errorf("share %v after 30%% then 10%%, want 0.3", got)
	}
	var nilP *Progress
	nilP.scoredShare(1, 2) // no panic
}
