package capacity

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"testing"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
	"github.com/kgauge/kgauge/sketch"
)

func smallMixture(t *testing.T, rows, rowGroup int) string {
	t.Helper()
	o := synth.DefaultMixtureOptions()
	o.Rows, o.Dims, o.K, o.RowGroup = rows, 6, 4, rowGroup
	path := filepath.Join(t.TempDir(), "m.parquet")
	if err := synth.WriteMixture(path, o); err != nil {
		t.Fatal(err)
	}
	return path
}

func quickOptions() kgauge.Options {
	o := kgauge.DefaultOptions()
	o.Criteria.MaxK = 6
	o.Sketch.CoresetSize = 800
	o.Sketch.SampleSize = 800
	o.Criteria.GapRefs = 3
	o.Criteria.GapSample = 400
	o.Criteria.Anchors = 200
	o.Workers = 2
	return o
}

// TestTimedProbeLimits: the plan's probe reads whole units, at most three and, beyond the first, no
// more than a twentieth of the rows, and replaces the machine rates with positive measurements.
func TestTimedProbeLimits(t *testing.T) {
	path := smallMixture(t, 100_000, 2048)
	p, err := Forecast(context.Background(), []string{path}, quickOptions(), true)
	if err != nil {
		t.Fatal(err)
	}
	pt := p.Calibration.Probe
	if pt == nil {
		t.Fatal("no probe timing recorded")
	}
	if pt.Units < 1 || pt.Units > probeMaxUnits || pt.Rows != int64(pt.Units)*2048 {
		t.Errorf("probe read %d rows in %d units; want whole 2048-row units, 1 to %d of them", pt.Rows, pt.Units, probeMaxUnits)
	}
	if pt.Units > 1 && pt.Rows > 100_000/probeShare {
		t.Errorf("probe read %d rows, more than a twentieth of 100000", pt.Rows)
	}
	c := p.Calibration
	for name, v := range map[string]float64{"scan": c.ScanBytesPerSec, "add": c.AddSecPerValue,
		"kernel": c.KernelPKDPerSec} {
		if !(v > 0) || math.IsInf(v, 0) {
			t.Errorf("%s rate %v after the probe", name, v)
		}
	}
	if err := c.Validate(); err != nil {
		t.Error(err)
	}
	// The criteria runs: k = 6, 4 and 2 without the Ward linkage, k = 1 with and without it, at the
	// estimate's sizes (the probe's rows fill the 800-point coreset).
	cp := pt.Criteria
	if cp == nil {
		t.Fatal("no criteria runs recorded")
	}
	want := []cost.CriteriaRun{{K: 1, Ward: true, Leaves: 50}, {K: 1}, {K: 2}, {K: 4}, {K: 6}}
	if len(cp.Runs) != len(want) || cp.Coreset != 800 || cp.Parallel < 1 || cp.Dims != 6 {
		t.Fatalf("criteria runs %+v, want k = 1 (Ward), 1, 2, 4, 6 on an 800-point coreset of 6 columns", cp)
	}
	for i, r := range cp.Runs {
		if r.K != want[i].K || r.Ward != want[i].Ward || r.Leaves != want[i].Leaves || !(r.Seconds > 0) {
			t.Errorf("criteria run %d: %+v, want %+v with a positive time", i, r, want[i])
		}
	}
	fromRuns, ok := cost.CriteriaFromRuns(p.Workload, cp, p.Workload.Cores)
	if !ok || p.Terms.Criteria != fromRuns {
		t.Errorf("criteria term %v is not the runs' price %v (ok %v)", p.Terms.Criteria, fromRuns, ok)
	}
	if p.Workload.Rows != 100_000 || p.Workload.Units != 100_000/2048+1 || p.Workload.Dims != 6 {
		t.Errorf("workload %+v does not match the file", p.Workload)
	}
	if p.Seconds != p.Terms.Open+p.Terms.Probe+p.Terms.Pass+p.Terms.Criteria {
		t.Errorf("predicted seconds %v is not the sum of the terms %+v", p.Seconds, p.Terms)
	}
	noProbe, err := Forecast(context.Background(), []string{path}, quickOptions(), false)
	if err != nil {
		t.Fatal(err)
	}
	if noProbe.Calibration.Probe != nil || !reflect.DeepEqual(noProbe.Calibration, cost.Default()) {
		t.Error("a plan without the probe does not use the committed calibration as it is")
	}
}

// TestFitToRun: after fitting, the model reproduces the measured open, probe, pass and criteria times of
// the run, whatever they were, with and without whole stages in the calibration's criteria runs
// (their factor over the runs' price must survive the fit).
func TestFitToRun(t *testing.T) {
	w := cost.Workload{Files: 3, Units: 40, Rows: 2_000_000, Bytes: 256_000_000, Dims: 16, Workers: 2, Cores: 2,
		MinK: 1, MaxK: 20, Coreset: 8192, Sample: 4096, MiniBatchRows: 1 << 17, BatchRows: 4096, ProbeRows: 65536,
		ProbeUnits: 16, Restarts: 3, Anchors: 1000, GapRefs: 10, GapSample: 2000, GapRestarts: 1}
	staged := cost.Default()
	staged.Criteria = slices.Clone(staged.Criteria)
	for i := range staged.Criteria {
		staged.Criteria[i].Stages = []cost.CriteriaStage{{MinK: 1, MaxK: 10, Workers: 2, Seconds: 1 + float64(i)},
			{MinK: 1, MaxK: 20, Workers: 2, Seconds: 7 + float64(i)}}
	}
	for _, tc := range []struct {
		base cost.Calibration
		tm   kgauge.Timings
	}{{cost.Default(), kgauge.Timings{Open: 0.01, Probe: 0.2, Pass: 4, Criteria: 9}},
		{cost.Default(), kgauge.Timings{Open: 0.5, Probe: 1, Pass: 40, Criteria: 2}},
		{cost.Default(), kgauge.Timings{Open: 0.001, Probe: 0.1, Pass: 0.05, Criteria: 30}},
		{staged, kgauge.Timings{Open: 0.01, Probe: 0.2, Pass: 4, Criteria: 9}},
		{staged, kgauge.Timings{Open: 0.001, Probe: 0.1, Pass: 0.05, Criteria: 30}}} {
		tm := tc.tm
		cal := FitToRun(tc.base, w, tm)
		if err := cal.Validate(); err != nil {
			t.Fatalf("fitted calibration: %v", err)
		}
		p := cost.Predict(w, cal).Terms
		for _, c := range []struct {
			name      string
			got, want float64
		}{{"open", p.Open, tm.Open}, {"probe", p.Probe, tm.Probe}, {"pass", p.Pass, tm.Pass}, {"criteria", p.Criteria, tm.Criteria}} {
			if math.Abs(c.got-c.want) > 1e-9*c.want {
				t.Errorf("%+v: fitted %s %v, measured %v", tm, c.name, c.got, c.want)
			}
		}
	}
}

func TestProject(t *testing.T) {
	path := smallMixture(t, 20_000, 4096)
	opt := quickOptions()
	w, err := kgauge.PlanWorkload([]string{path}, opt)
	if err != nil {
		t.Fatal(err)
	}
	res, sk, err := kgauge.Estimate(context.Background(), []string{path}, opt)
	if err != nil {
		t.Fatal(err)
	}
	Project(res, w)
	if res.Throughput == nil || res.Throughput.Bytes != w.Bytes || !(res.Throughput.RowsPerSecond > 0) {
		t.Fatalf("throughput %+v", res.Throughput)
	}
	if len(res.Projection) != 3 || res.Projection[2].Rows != 100*w.Rows {
		t.Fatalf("projection %+v", res.Projection)
	}
	// A result merged from saved sketches has no pass to measure.
	kgs := filepath.Join(t.TempDir(), "s.kgs")
	if err := saveTo(kgs, sk); err != nil {
		t.Fatal(err)
	}
	if _, err := kgauge.PlanWorkload([]string{kgs}, opt); err == nil {
		t.Error("PlanWorkload priced a saved sketch")
	}
	merged, _, err := kgauge.Estimate(context.Background(), []string{kgs}, opt)
	if err != nil {
		t.Fatal(err)
	}
	Project(merged, cost.Workload{})
	if merged.Throughput != nil || merged.Projection != nil {
		t.Error("a sketch-only result got a throughput or projection")
	}
}

func saveTo(path string, sk *sketch.Sketch) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := sk.Encode(f); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// TestTimedProbeArrowStream: an Arrow IPC stream is one unit of unknown length; the probe reads only
// a part of it.
func TestTimedProbeArrowStream(t *testing.T) {
	o := synth.DefaultMixtureOptions()
	o.Rows, o.Dims, o.K, o.Format, o.RowGroup = 200_000, 6, 4, synth.ArrowStream, 8192
	path := filepath.Join(t.TempDir(), "m.arrows")
	if err := synth.WriteMixture(path, o); err != nil {
		t.Fatal(err)
	}
	p, err := Forecast(context.Background(), []string{path}, quickOptions(), true)
	if err != nil {
		t.Fatal(err)
	}
	pt := p.Calibration.Probe
	if pt == nil || pt.Units != 1 || pt.Rows < probeKeepRows || pt.Rows >= 200_000 {
		t.Fatalf("probe of a 200000-row stream: %+v; want one unit, at least %d rows and not all", pt, probeKeepRows)
	}
	if pt.Bytes != pt.Rows*6*8 {
		t.Errorf("probe bytes %d, want the %d values read × 8", pt.Bytes, pt.Rows*6)
	}
	if !(p.Seconds > 0) {
		t.Errorf("predicted %v s", p.Seconds)
	}
}

func TestProbeRuns(t *testing.T) {
	type run struct {
		k    int
		ward bool
	}
	for _, tc := range []struct {
		minK, maxK int
		want       []run
	}{
		{1, 20, []run{{20, false}, {11, false}, {2, false}, {1, true}, {1, false}}},
		{1, 40, []run{{40, false}, {21, false}, {2, false}, {1, true}, {1, false}}},
		{1, 3, []run{{3, false}, {2, false}, {1, true}, {1, false}}},
		{1, 2, []run{{2, false}, {1, true}, {1, false}}},
		{1, 1, []run{{1, true}, {1, false}}},
		{5, 9, []run{{9, false}, {7, false}, {5, false}, {1, true}, {1, false}}},
	} {
		var got []run
		for _, r := range probeRuns(tc.minK, tc.maxK) {
			got = append(got, run{r.K, r.Ward})
		}
		if !reflect.DeepEqual(got, tc.want) {
			t.Errorf("probeRuns(%d, %d) = %v, want %v", tc.minK, tc.maxK, got, tc.want)
		}
	}
}

// blobs draws n points in d dims around k centres (invented data for property tests only).
func blobs(n, d, k int) kmeans.Data {
	rng := rand.New(rand.NewPCG(3, 4))
	x := make([]float64, n*d)
	for i := range n {
		for j := range d {
			x[i*d+j] = float64(5*((i%k)+j%2)) + rng.NormFloat64()
		}
	}
	return kmeans.Data{X: x, D: d}
}

// TestWardLeaves: the plan's count of the Ward linkage's leaves is what criteria.Evaluate reports,
// and SkipWard (the probe's runs) drops the linkage and its vote and changes no other score.
func TestWardLeaves(t *testing.T) {
	for _, tc := range []struct{ m, maxK int }{{300, 6}, {800, 6}, {800, 20}, {800, 40}, {450, 200}} {
		s := criteria.ExactSummary(blobs(tc.m, 3, 4))
		o := criteria.DefaultOptions()
		o.MinK, o.MaxK, o.GapRefs, o.GapSample, o.Anchors = tc.maxK, tc.maxK, 1, 100, 50
		res, err := criteria.Evaluate(context.Background(), s, o)
		if err != nil {
			t.Fatal(err)
		}
		if got := criteria.WardLeaves(tc.m, tc.maxK); got != res.Ward.Leaves {
			t.Errorf("criteria.WardLeaves(%d, %d) = %d, Evaluate's linkage had %d leaves", tc.m, tc.maxK, got, res.Ward.Leaves)
		}
	}
	s := criteria.ExactSummary(blobs(600, 3, 4))
	o := criteria.DefaultOptions()
	o.MaxK, o.GapRefs, o.GapSample, o.Anchors = 6, 2, 200, 100
	full, err := criteria.Evaluate(context.Background(), s, o)
	if err != nil {
		t.Fatal(err)
	}
	o.SkipWard = true
	skip, err := criteria.Evaluate(context.Background(), s, o)
	if err != nil {
		t.Fatal(err)
	}
	if skip.Ward.Leaves != 0 || len(skip.Ward.Merges) != 0 || full.Ward.Leaves == 0 {
		t.Errorf("Ward leaves %d with SkipWard, %d without", skip.Ward.Leaves, full.Ward.Leaves)
	}
	for i := range full.PerK {
		a, b := full.PerK[i], skip.PerK[i]
		a.WardHeight, a.WardJump, b.WardHeight, b.WardJump = 0, 0, 0, 0
		if fmt.Sprint(a) != fmt.Sprint(b) { // fmt, not DeepEqual: undefined scores are NaN
			t.Errorf("k=%d: SkipWard changed the scores:\n%+v\n%+v", a.K, a, b)
		}
	}
	for _, v := range skip.Votes {
		if v.Criterion == criteria.NameWard && !v.Abstain {
			t.Errorf("Ward vote %+v without the linkage; want an abstention", v)
		}
	}
}

// TestCriteriaRunsStages: CriteriaRuns returns the runs asked for (k = 1 with and without the
// Ward linkage, then each k) and one whole stage per largest k asked for, ascending whatever the
// order asked, each from k = 1 on the estimate's criteria workers with a positive time; and the
// calibration that carries them is valid.
func TestCriteriaRunsStages(t *testing.T) {
	path := smallMixture(t, 6000, 2048)
	opt := kgauge.DefaultOptions()
	opt.Criteria.MaxK = 6
	opt.Criteria.Workers = 2
	cp, err := CriteriaRuns(context.Background(), []string{path}, opt, []int{2, 6}, []int{6, 3})
	if err != nil {
		t.Fatal(err)
	}
	var ks []int
	for _, r := range cp.Runs {
		ks = append(ks, r.K)
	}
	if want := []int{1, 1, 2, 6}; !reflect.DeepEqual(ks, want) {
		t.Errorf("runs at k %v, want %v", ks, want)
	}
	if len(cp.Stages) != 2 || cp.Stages[0].MaxK != 3 || cp.Stages[1].MaxK != 6 {
		t.Fatalf("stages %+v, want up to k = 3 and 6", cp.Stages)
	}
	for _, st := range cp.Stages {
		if st.MinK != 1 || st.Workers != 2 || !(st.Seconds > 0) {
			t.Errorf("stage %+v: want from k = 1 on 2 workers, positive time", st)
		}
	}
	cal := cost.Default()
	cal.Criteria = []cost.CriteriaProbe{*cp}
	if err := cal.Validate(); err != nil {
		t.Errorf("calibration with these runs: %v", err)
	}
	if f := cp.StageFactor(6); !(f > 0) || math.IsInf(f, 0) {
		t.Errorf("StageFactor(6) = %v, want a positive number", f)
	}
}
