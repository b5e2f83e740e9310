package bench

import (
	"context"
	"math/rand/v2"
	"testing"

	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/criteria"
)

// TestOneClusterShapesSayOne is issue 12's "no false structure": data with one cluster, however
// correlated, skewed or heavy-tailed, gives k = 1 with structure false, through the CLI's path
// (probe, sketch, kgauge.Summarize with the default scaling, criteria.Evaluate). Property test with invented
// data (synth.OneCluster), plus the null scenario (a) of Tibshirani, Walther & Hastie (2001).
func TestOneClusterShapesSayOne(t *testing.T) {
	type shape struct {
		name string
		x    []float64
		d    int
	}
	var shapes []shape
	for _, s := range []struct {
		name string
		d    int
	}{{"correlated", 5}, {"lognormal", 5}, {"student-t", 5}} {
		x, err := synth.OneCluster(s.name, 4000, s.d, rand.New(rand.NewPCG(31, uint64(s.d))))
		if err != nil {
			t.Fatal(err)
		}
		shapes = append(shapes, shape{s.name, x, s.d})
	}
	x, d, _ := synth.Scenario('a', rand.New(rand.NewPCG(31, 'a')))
	shapes = append(shapes, shape{"scenario (a)", x, d})
	for _, sh := range shapes {
		t.Run(sh.name, func(t *testing.T) {
			w := (&Workload{Name: sh.name, K: 1, D: sh.d, X: sh.x}).finish(5)
			s, err := summaryOf(w, sketchSpec{Coreset: 1000, Sample: 4096, MinK: 1, MaxK: 10, Seed: 3})
			if err != nil {
				t.Fatal(err)
			}
			o := criteria.DefaultOptions()
			o.MaxK, o.Seed = 10, 3
			r, err := criteria.Evaluate(context.Background(), s, o)
			if err != nil {
				t.Fatal(err)
			}
			if r.Verdict.K != 1 || r.Verdict.Structure {
				t.Errorf("verdict k=%d structure=%v (%s); votes %+v; one-mode %+v", r.Verdict.K, r.Verdict.Structure, r.Verdict.Why, r.Votes, r.Modes)
			}
		})
	}
}
