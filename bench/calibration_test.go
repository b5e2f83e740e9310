package bench

import (
	"context"
	"flag"
	"math"
	"os"
	"reflect"
	"testing"

	"github.com/kgauge/kgauge/criteria"
)

var (
	calibrate     = flag.Bool("calibrate", false, "run the full calibration grid and rewrite bench/report/grid.json, CALIBRATION.md and criteria/weights.json")
	calibrateFrom = flag.Bool("calibrate-from-grid", false, "re-derive CALIBRATION.md and criteria/weights.json from the committed bench/report/grid.json")
)

const (
	gridPath    = "report/grid.json"
	weightsPath = "../criteria/weights.json"
	calibCmd    = "go test ./bench/ -run TestCalibrationGrid -calibrate -timeout 60m"
)

// TestCalibrationGrid runs the quick grid (always) and, with -calibrate, the full one.
func TestCalibrationGrid(t *testing.T) {
	ctx := context.Background()
	if !*calibrate && !*calibrateFrom {
		runs, err := RunGrid(ctx, QuickGrid(), nil)
		if err != nil {
			t.Fatal(err)
		}
		// 5 scenarios with seeds 1..2 on the first realization, Ruspini, 10 one-cluster shapes.
		if got, want := len(runs), 5*2+1+10; got != want {
			t.Fatalf("quick grid: %d runs, want %d", got, want)
		}
		for _, r := range runs {
			if len(r.Votes) != len(criteria.CriterionNames()) {
				t.Errorf("%s: %d votes, want %d", r.Case, len(r.Votes), len(criteria.CriterionNames()))
			}
		}
		w := DeriveWeights(runs, "quick")
		b, err := MarshalWeights(w)
		if err != nil {
			t.Fatal(err)
		}
		back, err := criteria.ParseWeights(b)
		if err != nil {
			t.Fatalf("derived weights do not parse: %v", err)
		}
		if !reflect.DeepEqual(back, w) {
			t.Errorf("weights do not survive their file format:\n%+v\n%+v", back, w)
		}
		for i := 1; i < len(w.Calibration); i++ {
			if w.Calibration[i].Right < w.Calibration[i-1].Right {
				t.Errorf("calibration not monotone: %+v", w.Calibration)
			}
		}
		return
	}
	var runs []GridRun
	var err error
	if *calibrate {
		runs, err = RunGrid(ctx, FullGrid(), os.Stderr)
		if err != nil {
			t.Fatal(err)
		}
		if err := SaveGrid(gridPath, runs); err != nil {
			t.Fatal(err)
		}
	} else if runs, err = LoadGrid(gridPath); err != nil {
		t.Fatal(err)
	}
	w := DeriveWeights(runs, calibCmd)
	b, err := MarshalWeights(w)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(weightsPath, b, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile("report/CALIBRATION.md", []byte(CalibrationMarkdown(runs, w, calibCmd)), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestEmbeddedWeightsMatchGrid checks that the weights compiled into criteria are those the
// committed grid runs give (so the table has one source: bench/report/grid.json).
func TestEmbeddedWeightsMatchGrid(t *testing.T) {
	runs, err := LoadGrid(gridPath)
	if err != nil {
		t.Skipf("no committed grid: %v", err)
	}
	w := DeriveWeights(runs, calibCmd)
	b, err := MarshalWeights(w)
	if err != nil {
		t.Fatal(err)
	}
	want, err := criteria.ParseWeights(b)
	if err != nil {
		t.Fatal(err)
	}
	if got := criteria.DefaultWeights(); !reflect.DeepEqual(got, want) {
		t.Errorf("criteria/weights.json differs from the weights derived from %s; run %s -calibrate-from-grid", gridPath, "go test ./bench/ -run TestCalibrationGrid")
	}
}

// TestSeedStabilityOnGrid checks issue 12's seed rule on the committed grid runs with the
// embedded weights: for seeds 1..10 of S4, A1, Unbalance and one realization of each Tibshirani
// scenario, at least 9 of 10 verdicts either equal the most common one or say they are unstable.
func TestSeedStabilityOnGrid(t *testing.T) {
	runs, err := LoadGrid(gridPath)
	if err != nil {
		t.Skipf("no committed grid: %v", err)
	}
	w := criteria.DefaultWeights()
	byCase := map[string][]criteria.Verdict{}
	for _, r := range runs {
		if r.Stable {
			byCase[r.Case] = append(byCase[r.Case], r.Decide(w))
		}
	}
	if len(byCase) < 8 {
		t.Fatalf("%d seed-stability sets in the grid, want 8", len(byCase))
	}
	for c, vs := range byCase {
		mode, _, covered := seedAgreement(vs)
		if len(vs) != 10 || covered < 9 {
			t.Errorf("%s: %d of %d seeds agree with k=%d or are flagged unstable, want >= 9 of 10", c, covered, len(vs), mode)
		}
	}
}

// TestCalibrationTable checks the calibration's properties on invented supports (a property test,
// not a measurement): weak verdicts right half of the time, strong ones always. The table must
// not fall as the support rises, must tell the weak ones less than 0.6, and must not claim more
// than the strongest calibrationTopRuns runs show by the rule of succession (21/22).
func TestCalibrationTable(t *testing.T) {
	var pts []calPoint
	for i := range 20 {
		pts = append(pts, calPoint{support: 0.1 + 0.01*float64(i), right: i%2 == 0})
	}
	for i := range 40 {
		pts = append(pts, calPoint{support: 0.5 + 0.0125*float64(i), right: true})
	}
	round := func(v float64) float64 { return math.Round(v*1000) / 1000 }
	table := calibrationTable(pts, round)
	if len(table) != 51 || table[0].Support != 0 || table[50].Support != 1 {
		t.Fatalf("table has %d steps from %v to %v, want 51 from 0 to 1", len(table), table[0].Support, table[len(table)-1].Support)
	}
	runs := 0
	for i, p := range table {
		runs += p.Runs
		if i > 0 && p.Right < table[i-1].Right {
			t.Errorf("step %v: %v below the step before (%v)", p.Support, p.Right, table[i-1].Right)
		}
		if p.Right > round(21.0/22) {
			t.Errorf("step %v: %v above 21/22", p.Support, p.Right)
		}
	}
	if runs != len(pts) {
		t.Errorf("steps hold %d runs, want %d", runs, len(pts))
	}
	w := criteria.Weights{Calibration: table}
	if c := w.Confidence(0.15); !(c < 0.6) {
		t.Errorf("confidence at support 0.15 = %v, want below 0.6 (half of those runs are wrong)", c)
	}
	if c := w.Confidence(0.9); !(c > 0.9) {
		t.Errorf("confidence at support 0.9 = %v, want above 0.9 (all of those runs are right)", c)
	}
}
