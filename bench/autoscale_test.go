package bench

import (
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
)

// TestAutoScaleColumns checks which columns --scale auto (kgauge's default) takes the logarithm
// of, through the CLI's sketch: every column of independent log-normal data (invented, property
// test: ln x is exactly Gaussian), none of Fränti's Unbalance (Fränti & Sieranoja 2018), whose
// first column is right-skewed only because five small clusters lie far above three large ones
// (sample skewness 2.9, of its logarithm 2.2: from scipy.stats.skew on the published file), and
// none of the symmetric Fränti S1 and Ruspini (1970) sets.
func TestAutoScaleColumns(t *testing.T) {
	x, err := synth.OneCluster("lognormal", 4000, 5, rand.New(rand.NewPCG(31, 5)))
	if err != nil {
		t.Fatal(err)
	}
	logNormal := (&Workload{Name: "lognormal", K: 1, D: 5, X: x}).finish(5)
	for _, tc := range []struct {
		name   string
		w      func() (*Workload, error)
		logged []bool
		skewed int // columns reported skewed
	}{
		{"log-normal", func() (*Workload, error) { return logNormal, nil }, []bool{true, true, true, true, true}, 5},
		{"Unbalance", func() (*Workload, error) { return loadRef("Unbalance", []string{"../testdata/refsets"}) }, nil, 1},
		{"S1", func() (*Workload, error) { return loadRef("S1", []string{"../testdata/refsets"}) }, nil, 0},
		{"Ruspini", func() (*Workload, error) { return loadRef("Ruspini", []string{"../testdata/refsets"}) }, nil, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			w, err := tc.w()
			if err != nil {
				t.Fatal(err)
			}
			sk, err := sketchOf(w, sketchSpec{Coreset: 2000, Sample: 4096, MinK: 1, MaxK: 4, Seed: 1})
			if err != nil {
				t.Fatal(err)
			}
			r, err := kgauge.Evaluate(t.Context(), sk, quickAuto())
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(r.Scaling.Logged, tc.logged) || r.Scaling.Method != kgauge.Auto {
				t.Errorf("scaling %s, logged %v; want auto, %v", r.Scaling.Method, r.Scaling.Logged, tc.logged)
			}
			if len(r.Skewed) != tc.skewed {
				t.Errorf("skewed columns %+v; want %d", r.Skewed, tc.skewed)
			}
		})
	}
}

// quickAuto is kgauge's default options at --scale auto with k = 1..4, enough to read the scaling.
func quickAuto() kgauge.Options {
	o := kgauge.DefaultOptions()
	o.Scale = kgauge.Auto
	o.Criteria.MinK, o.Criteria.MaxK = 1, 4
	return o
}
