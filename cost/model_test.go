package cost

import (
	"math"
	"slices"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/sketch"
)

// testCal is a calibration with round numbers, so that terms can be checked by hand: its criteria
// runs at 32 columns take 9 times those at 8 (testWidths).
func testCal() Calibration {
	return Calibration{Source: "test", OpenFileSeconds: 0.01, OpenUnitSeconds: 0.001,
		ScanBytesPerSec: 1e8, AddSecPerValue: 1e-9, KernelPKDPerSec: 1e9,
		Criteria: testWidths(9), PassOverhead: 1, FeedOverhead: 0.5, ProbeOverhead: 3,
		ParallelFraction: 0.8, Cores: 2, PageBytes: 1 << 20, BaseBytes: 1 << 24}
}

// testWidths is the runs of testRuns at 8 columns and f times them at 32.
func testWidths(f float64) []CriteriaProbe {
	a, b := *testRuns(), *testRuns()
	a.Dims, b.Dims = 8, 32
	for i := range b.Runs {
		b.Runs[i].Seconds *= f
	}
	return []CriteriaProbe{a, b}
}

func testWork() Workload {
	return Workload{Files: 2, Units: 20, Rows: 1_000_000, Bytes: 128_000_000, Dims: 16, Workers: 2, Cores: 2,
		MinK: 1, MaxK: 20, Coreset: 8192, Sample: 4096, MiniBatchRows: 1 << 18, BatchRows: 4096,
		ProbeRows: 65536, ProbeUnits: 16, Restarts: 3, Anchors: 1000, GapRefs: 10, GapSample: 2000, GapRestarts: 1}
}

func TestDefaultCalibrationIsValid(t *testing.T) {
	c := Default()
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	if c.Command == "" || c.Source == "" {
		t.Errorf("calibration.json does not say how it was made: source %q, command %q", c.Source, c.Command)
	}
}

func TestParseRejects(t *testing.T) {
	good, err := testCal().JSON()
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Parse(good); err != nil {
		t.Fatalf("round trip: %v", err)
	}
	none := testCal()
	none.Criteria = nil
	if err := none.Validate(); err == nil || !strings.Contains(err.Error(), "criteria_runs") {
		t.Errorf("a calibration without criteria runs: %v, want an error naming criteria_runs", err)
	}
	for _, tc := range []struct{ name, from, to, want string }{
		{"zero scan rate", `"scan_bytes_per_second": 100000000`, `"scan_bytes_per_second": 0`, "scan_bytes_per_second"},
		{"fraction above one", `"parallel_fraction": 0.8`, `"parallel_fraction": 1.5`, "parallel_fraction"},
		{"no cores", `"cores": 2`, `"cores": 0`, "cores"},
		{"widths not ascending", `"dims": 32`, `"dims": 4`, "ascending"},
		{"no Ward run", `"ward": true`, `"ward": false`, "Ward"},
		{"negative run", `"seconds": 0.5`, `"seconds": -0.5`, "negative"},
		{"unknown field", `"cores": 2`, `"cores": 2, "speed": 3`, "unknown field"},
		{"stage without time", `"runs": [`, `"stages": [{"min_k": 1, "max_k": 20, "workers": 2, "seconds": 0}], "runs": [`, "bad stage"},
		{"stage range reversed", `"runs": [`, `"stages": [{"min_k": 5, "max_k": 4, "workers": 2, "seconds": 1}], "runs": [`, "bad stage"},
		{"stages not ascending", `"runs": [`, `"stages": [{"min_k": 1, "max_k": 20, "workers": 2, "seconds": 1}, {"min_k": 1, "max_k": 10, "workers": 2, "seconds": 1}], "runs": [`, "bad stage"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			b := strings.Replace(string(good), tc.from, tc.to, 1)
			if b == string(good) {
				t.Fatalf("test fixture: %q not found in %s", tc.from, good)
			}
			_, err := Parse([]byte(b))
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("Parse: error %v, want one naming %q", err, tc.want)
			}
		})
	}
}

func TestSpeedup(t *testing.T) {
	for _, tc := range []struct {
		p    float64
		n    int
		want float64
	}{{0, 8, 1}, {1, 4, 4}, {0.5, 2, 1 / 0.75}, {0.8, 1, 1}, {0.9, 0, 1}} {
		if got := Speedup(tc.p, tc.n); math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("Speedup(%v, %d) = %v, want %v", tc.p, tc.n, got, tc.want)
		}
	}
}

// TestPredictTerms checks the terms against the formulas in the package doc, by hand.
func TestPredictTerms(t *testing.T) {
	c, w := testCal(), testWork()
	p := Predict(w, c)
	tm := p.Terms
	near := func(name string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("%s = %v, want %v", name, got, want)
		}
	}
	near("open", tm.Open, 2*0.01)
	near("scan", tm.Scan, 20*0.001+128e6/1e8)
	near("sketch", tm.Sketch, 1e6*16*1e-9)
	near("feed", tm.Feed, float64(1<<18)*210*16/1e9*0.5) // the feed overhead, 0.5
	near("speed-up", tm.Speedup, 1/(0.2+0.4))
	// The probe: 16 unit opens, then the probe's bytes and the seeding for every k under the probe
	// overhead (opens outside it).
	seed := math.Min(65536, float64(sketch.ProbeSeedRows))
	near("probe", tm.Probe, 16*0.001+(65536*128.0/1e8+seed*210*16/1e9)*Overhead(c.ProbeOverhead))
	near("pass", tm.Pass, (tm.Scan+tm.Sketch+tm.Feed)*0.6)
	// Without a probe, the criteria at 16 columns are the geometric mean of the runs' price at 8 and
	// at 32 columns (9 times that at 8): 3 times the price at 8.
	at8, _ := CriteriaFromRuns(w, testRuns(), 2)
	near("criteria", tm.Criteria, 3*at8)
	near("total", p.Seconds, tm.Open+tm.Probe+tm.Pass+tm.Criteria)
	m := p.Memory
	live := max(m.Probe, m.Sketches+m.ReadBuffers+m.PageBuffers, m.Criteria)
	if m.Live != live || m.Peak != m.Base+live*(100+GCPercent)/100 || p.PeakBytes != m.Peak {
		t.Errorf("peak %d is not base + (1 + GOGC/100) × the largest stage of %+v", p.PeakBytes, m)
	}
	if m.ReadBuffers != 2*4096*16*8 {
		t.Errorf("read buffers %d, want %d", m.ReadBuffers, 2*4096*16*8)
	}
	// Page buffers: workers × columns × 2 × one column chunk (capped at a page), the chunk being the
	// larger of its stored bytes and its decoded values (50,000 rows a unit × 8 bytes).
	for _, tc := range []struct {
		bytes int64
		chunk int64
	}{{128_000_000, 400_000}, {64_000_000, 400_000}, {256_000_000, 800_000}, {2_560_000_000, 1 << 20}} {
		w := testWork()
		w.Bytes = tc.bytes
		if got, want := PredictMemory(w, c).PageBuffers, 2*16*2*tc.chunk; got != want {
			t.Errorf("%d stored bytes: page buffers %d, want %d", tc.bytes, got, want)
		}
	}
}

// TestMemoryFromOwners: the sketch and criteria terms are the owning packages' own size functions
// (each tested there against the heap it measures), not copies, and the width terms grow as d².
func TestMemoryFromOwners(t *testing.T) {
	w := testWork()
	m := PredictMemory(w, testCal())
	cfg := sketch.Config{MinK: w.MinK, MaxK: w.MaxK, CoresetSize: w.Coreset, SampleSize: w.Sample,
		MiniBatchRows: w.MiniBatchRows}
	held := sketch.HeldBytes(cfg, w.Dims, w.BatchRows)
	if m.Sketches != 2*held {
		t.Errorf("sketch bytes %d, want 2 workers × sketch.HeldBytes = %d", m.Sketches, 2*held)
	}
	co := criteria.Options{MinK: w.MinK, MaxK: w.MaxK, Restarts: w.Restarts, Anchors: w.Anchors,
		GapRefs: w.GapRefs, GapSample: w.GapSample, GapRestarts: w.GapRestarts}
	summary := int64(w.Coreset)*17*8 + int64(w.Sample)*16*8 + 16*16*8
	if want := held + summary + criteria.WorkingBytes(co, w.Coreset, w.Sample, w.Dims, w.Cores); m.Criteria != want {
		t.Errorf("criteria bytes %d, want %d", m.Criteria, want)
	}
	// Width: the criteria stage grows as d² (cross products, covariance, eigen decompositions, a
	// k = 1 mixture; no larger mixture is fitted on 500 columns or more, criteria.WorkingBytes), so
	// its second difference over 500, 1000 and 1500 columns is at least that of the six d×d float64
	// copies of the eigen decompositions alone, 6·8·2·500² bytes; a linear term has none.
	at := func(d int) int64 {
		x := w
		x.Dims = d
		return PredictMemory(x, testCal()).Criteria
	}
	if second, floor := at(1500)-2*at(1000)+at(500), int64(6*8*2*500*500); second < floor {
		t.Errorf("criteria bytes at 500, 1000 and 1500 columns %d, %d, %d: second difference %d, want >= %d (the d² terms are missing)",
			at(500), at(1000), at(1500), second, floor)
	}
}

// TestScaling: ten times the data multiplies the rows-proportional terms by ten and leaves the
// criteria, which depend on the coreset only, and the memory unchanged.
func TestScaling(t *testing.T) {
	c, w := testCal(), testWork()
	rows := ScaleTable(w, c, 1, 10, 100)
	if len(rows) != 3 || rows[1].Rows != 10*w.Rows || rows[2].Bytes != 100*w.Bytes {
		t.Fatalf("scale rows %+v", rows)
	}
	p1, p10 := Predict(w, c), Predict(w.Scaled(10), c)
	if p10.Terms.Criteria != p1.Terms.Criteria {
		t.Errorf("criteria changed with the data: %v vs %v", p10.Terms.Criteria, p1.Terms.Criteria)
	}
	if got := p10.Terms.Scan / p1.Terms.Scan; math.Abs(got-10) > 1e-9 {
		t.Errorf("scan grew %v×, want 10×", got)
	}
	if p10.Terms.Feed != p1.Terms.Feed {
		t.Errorf("the mini-batch feed is capped by MiniBatchRows; it changed from %v to %v", p1.Terms.Feed, p10.Terms.Feed)
	}
	if p10.PeakBytes != p1.PeakBytes {
		t.Errorf("peak memory depends on the data size: %d vs %d", p10.PeakBytes, p1.PeakBytes)
	}
	if !(rows[0].Seconds < rows[1].Seconds && rows[1].Seconds < rows[2].Seconds) {
		t.Errorf("time does not grow with the data: %+v", rows)
	}
}

// TestWorkersBeyondCores: on 2 cores, 4 and 8 workers are no faster than 2, but hold more memory.
func TestWorkersBeyondCores(t *testing.T) {
	rows := WorkerTable(testWork(), testCal(), 1, 2, 4, 8)
	if !(rows[1].Seconds < rows[0].Seconds) {
		t.Errorf("2 workers (%v s) not faster than 1 (%v s)", rows[1].Seconds, rows[0].Seconds)
	}
	if rows[2].Seconds != rows[1].Seconds || rows[3].Seconds != rows[1].Seconds {
		t.Errorf("more workers than cores changed the time: %+v", rows)
	}
	if !(rows[3].PeakBytes > rows[1].PeakBytes) {
		t.Errorf("8 workers hold no more memory than 2: %+v", rows)
	}
	w := testWork()
	w.Units = 1
	if got := Predict(w, testCal()).Terms.Speedup; got != 1 {
		t.Errorf("one unit can keep only one worker busy; speed-up %v", got)
	}
}

func TestUnknownRowsFromBytes(t *testing.T) {
	w := testWork()
	w.Rows = -1
	if err := w.Validate(); err == nil {
		t.Error("negative rows accepted")
	}
	w.Rows = 0
	p := Predict(w, testCal())
	if want := float64(w.Bytes) / (8 * 16) * 16 * 1e-9; math.Abs(p.Terms.Sketch-want) > 1e-12 {
		t.Errorf("sketch term %v with rows from bytes, want %v", p.Terms.Sketch, want)
	}
}

// testRuns is a probe's criteria runs with round numbers: a setup of 0.1 s, a Ward linkage of 0.5 s
// on 50 leaves, and own parts 0.4, 0.5 and 1.0 s at k = 2, 11 and 20.
func testRuns() *CriteriaProbe {
	return &CriteriaProbe{Coreset: 8192, Parallel: 2, Runs: []CriteriaRun{
		{K: 1, Seconds: 0.1}, {K: 1, Ward: true, Leaves: 50, Seconds: 0.6},
		{K: 2, Seconds: 0.5}, {K: 11, Seconds: 0.6}, {K: 20, Seconds: 1.1}}}
}

func TestMakespan(t *testing.T) {
	for _, tc := range []struct {
		jobs []float64
		n    int
		want float64
	}{
		{[]float64{3, 2, 2, 1}, 2, 4},    // 3 | 2+2, then 1 after the 3
		{[]float64{3, 2, 2, 1}, 1, 8},    // one worker: the sum
		{[]float64{1, 5}, 2, 5},          // the longest job bounds it
		{[]float64{1, 1, 1}, 8, 1},       // idle workers change nothing
		{[]float64{2, 1, 1, 1, 1}, 2, 3}, // 2+1 | 1+1+1
		{nil, 2, 0},
	} {
		if got := Makespan(tc.jobs, tc.n); math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("Makespan(%v, %d) = %v, want %v", tc.jobs, tc.n, got, tc.want)
		}
	}
}

// TestCriteriaFromRuns checks the pricing from runs against the formula in its doc, by hand.
func TestCriteriaFromRuns(t *testing.T) {
	w := testWork() // k 1..20, coreset 8192 as the runs'
	w.WardLeaves = 60
	near := func(name string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-9 {
			t.Errorf("%s = %v, want %v", name, got, want)
		}
	}
	// One worker: setup 0.1 + Ward 0.5·60/50 + Σ own parts. k = 2..11 rise linearly 0.4 → 0.5 (sum
	// 4.5), k = 12..20 linearly from 0.5 to 1.0 (sum 9·0.5 + 0.5/9·45 = 7).
	s, ok := CriteriaFromRuns(w, testRuns(), 1)
	if !ok {
		t.Fatal("runs not usable")
	}
	near("one worker", s, 0.1+0.6+4.5+7)
	// Two workers: the schedule of the jobs, never less than half the work nor more than half plus the
	// longest job.
	s2, _ := CriteriaFromRuns(w, testRuns(), 2)
	if work := 0.6 + 4.5 + 7; !(s2 >= 0.1+work/2-1e-9 && s2 <= 0.1+work/2+1.0+1e-9) {
		t.Errorf("two workers: %v outside [%v, %v]", s2, 0.1+work/2, 0.1+work/2+1)
	}
	// A k range that starts above 1: only its k, each at least the run below it.
	w5 := w
	w5.MinK, w5.MaxK = 11, 20
	s5, _ := CriteriaFromRuns(w5, testRuns(), 1)
	near("k 11..20", s5, 0.1+0.6+0.5+7)
	// An estimate coreset four times the probe's costs four times as much.
	w4 := w
	w4.Coreset = 4 * 8192
	s4, _ := CriteriaFromRuns(w4, testRuns(), 1)
	near("4× coreset", s4, 4*s)
	// Beyond the largest run, the line through the last two: k = 21..29 each 1.0 + (k−20)·0.5/9
	// (sum 9 + 2.5).
	w29 := w
	w29.MaxK = 29
	s29, _ := CriteriaFromRuns(w29, testRuns(), 1)
	near("k 1..29", s29, 0.1+0.6+4.5+7+11.5)
	// Without the k = 1 runs the runs cannot price the stage, and Predict prices them from the
	// calibration's.
	cp := testRuns()
	cp.Runs = cp.Runs[2:]
	if _, ok := CriteriaFromRuns(w, cp, 1); ok {
		t.Error("runs without k = 1 priced the stage")
	}
}

// TestPredictWithRuns: with the probe's criteria runs, Predict's criteria term is CriteriaFromRuns,
// and without them CriteriaFromWidths on the calibration's runs.
func TestPredictWithRuns(t *testing.T) {
	c, w := testCal(), testWork()
	plain := Predict(w, c).Terms.Criteria
	if want, _ := CriteriaFromWidths(w, c.Criteria, w.Cores); plain != want {
		t.Errorf("criteria without a probe %v, want the calibration's runs' price %v", plain, want)
	}
	c.Probe = &ProbeTiming{Criteria: testRuns()}
	want, _ := CriteriaFromRuns(w, testRuns(), w.Cores)
	if got := Predict(w, c).Terms.Criteria; got != want || got == plain {
		t.Errorf("criteria %v, want the runs' price %v (the calibration's price is %v)", got, want, plain)
	}
	c.Probe.Criteria.Runs = c.Probe.Criteria.Runs[2:]
	if got := Predict(w, c).Terms.Criteria; got != plain {
		t.Errorf("unusable runs: criteria %v, want the calibration's price %v", got, plain)
	}
	// The criteria runs do not depend on the data size: 10× the rows leaves the term alone.
	c.Probe.Criteria = testRuns()
	if a, b := Predict(w, c).Terms.Criteria, Predict(w.Scaled(10), c).Terms.Criteria; a != b {
		t.Errorf("criteria changed with the data: %v vs %v", a, b)
	}
}

// TestCriteriaFromWidths checks the pricing over column counts against the formula in its doc, by
// hand: the runs at 32 columns take f times those at 8, so the exponent is ln f ÷ ln 4.
func TestCriteriaFromWidths(t *testing.T) {
	w := testWork()
	at8, ok := CriteriaFromRuns(w, testRuns(), 2)
	if !ok || !(at8 > 0) {
		t.Fatalf("runs not usable: %v", at8)
	}
	for _, tc := range []struct {
		name      string
		f         float64
		dims, red int // Dims and CriteriaDims
		sets      int // how many sets to keep (0: both)
		want      float64
	}{
		{"at the narrow set", 9, 8, 0, 0, at8},
		{"at the wide set", 9, 32, 0, 0, 9 * at8},
		{"between: the geometric mean", 9, 16, 0, 0, 3 * at8},
		{"beyond: the last exponent", 9, 64, 0, 0, 27 * at8},
		{"below: the first exponent", 9, 4, 0, 0, at8 / 3},
		{"the criteria's width, not the file's", 9, 1000, 16, 0, 3 * at8},
		{"between: no clamp", 100, 16, 0, 0, 10 * at8},
		{"beyond: exponent clamped to 3", 100, 64, 0, 0, 100 * 8 * at8},
		{"beyond: never cheaper with more columns", 0.25, 64, 0, 0, 0.25 * at8},
		{"one set: proportional to the columns", 9, 16, 0, 1, 2 * at8},
	} {
		t.Run(tc.name, func(t *testing.T) {
			v := w
			v.Dims, v.CriteriaDims = tc.dims, tc.red
			sets := testWidths(tc.f)
			if tc.sets > 0 {
				sets = sets[:tc.sets]
			}
			got, ok := CriteriaFromWidths(v, sets, 2)
			if !ok || math.Abs(got-tc.want) > 1e-9*tc.want {
				t.Errorf("CriteriaFromWidths = %v (ok %v), want %v", got, ok, tc.want)
			}
		})
	}
	// Sets of one width on data of different cluster counts: the mean of their prices. Two sets at
	// 8 columns, one 1× and one 3× testRuns, give 2× at 8; with 18× at 32, the exponent is
	// ln 9 ÷ ln 4 again.
	two := testWidths(18)
	third := *testRuns()
	third.Dims = 8
	third.Runs = slices.Clone(third.Runs)
	for i := range third.Runs {
		third.Runs[i].Seconds *= 3
	}
	two = []CriteriaProbe{two[0], third, two[1]}
	for _, tc := range []struct {
		dims int
		want float64
	}{{8, 2 * at8}, {16, 6 * at8}, {32, 18 * at8}} {
		v := w
		v.Dims = tc.dims
		if got, _ := CriteriaFromWidths(v, two, 2); math.Abs(got-tc.want) > 1e-9*tc.want {
			t.Errorf("two sets at 8 columns, priced at %d: %v, want %v", tc.dims, got, tc.want)
		}
	}
	sets := testWidths(9)
	for i := range sets {
		sets[i].Runs = sets[i].Runs[2:] // no k = 1 runs: nothing can price the stage
	}
	if _, ok := CriteriaFromWidths(w, sets, 2); ok {
		t.Error("sets without k = 1 priced the stage")
	}
}

// TestBeamFigures: a Beam worker holds one partial sketch with its buffers (the pass parts of
// PredictMemory for one worker), and the Beam pass is the single-worker pass and the per-item
// overhead shared by the workers, plus the start-up once.
func TestBeamFigures(t *testing.T) {
	c, w := testCal(), testWork()
	one := w
	one.Workers, one.Units = 1, 1
	m := PredictMemory(one, c)
	if got, want := BeamWorkerBytes(w, c), m.Base+(m.Sketches+m.ReadBuffers+m.PageBuffers)*(100+GCPercent)/100; got != want {
		t.Errorf("BeamWorkerBytes = %d, want %d", got, want)
	}
	w1, w4 := w, w
	w1.Workers, w4.Workers = 1, 4
	a, b := BeamPassSeconds(w1, c)-BeamPipelineStartup.Seconds(), BeamPassSeconds(w4, c)-BeamPipelineStartup.Seconds()
	if math.Abs(a/b-4) > 1e-9 {
		t.Errorf("Beam pass on 1 and 4 workers: %v and %v s; want a ratio of 4", a, b)
	}
	if want := float64(w.Units) * BeamWorkItemOverhead.Seconds(); a < want {
		t.Errorf("Beam pass %v s misses the %v s of per-item overhead", a, want)
	}
}

// withStages returns cp with whole stages up to k = 10 and 20 (from k = 1, on two workers) that
// took f10 and f20 times what cp's runs price for them.
func withStages(t *testing.T, cp CriteriaProbe, f10, f20 float64) CriteriaProbe {
	t.Helper()
	for _, st := range []struct {
		maxK int
		f    float64
	}{{10, f10}, {20, f20}} {
		w := Workload{Dims: max(cp.Dims, 1), MinK: 1, MaxK: st.maxK, Rows: int64(cp.Coreset), Coreset: cp.Coreset,
			WardLeaves: criteria.WardLeaves(cp.Coreset, st.maxK)}
		p, ok := CriteriaFromRuns(w, &cp, 2)
		if !ok || !(p > 0) {
			t.Fatalf("runs price the stage to %d at %v (ok %v)", st.maxK, p, ok)
		}
		cp.Stages = append(cp.Stages, CriteriaStage{MinK: 1, MaxK: st.maxK, Workers: 2, Seconds: st.f * p})
	}
	return cp
}

// TestStageFactor: a set whose whole stages took f times what its runs price for them scales its
// price by f: at the stages' largest k, linearly between them, the nearest stage's beyond them,
// and 1 without stages; CriteriaFromWidths applies it to each set, and a calibration carrying
// stages passes Validate and survives its JSON.
func TestStageFactor(t *testing.T) {
	cp := withStages(t, *testRuns(), 2, 1.5)
	for _, tc := range []struct {
		maxK int
		want float64
	}{{10, 2}, {20, 1.5}, {15, 1.75}, {12, 1.9}, {4, 2}, {40, 1.5}} {
		if got := cp.StageFactor(tc.maxK); math.Abs(got-tc.want) > 1e-9 {
			t.Errorf("StageFactor(%d) = %v, want %v", tc.maxK, got, tc.want)
		}
	}
	if got := testRuns().StageFactor(20); got != 1 {
		t.Errorf("no stages: StageFactor = %v, want 1", got)
	}
	w := testWork()
	plain := testWidths(9)
	staged := []CriteriaProbe{withStages(t, plain[0], 3, 2), withStages(t, plain[1], 3, 2)}
	for _, tc := range []struct {
		maxK int
		f    float64
	}{{20, 2}, {10, 3}, {15, 2.5}} {
		v := w
		v.MaxK = tc.maxK
		a, _ := CriteriaFromWidths(v, plain, 2)
		b, ok := CriteriaFromWidths(v, staged, 2)
		if !ok || math.Abs(b-tc.f*a) > 1e-9*b {
			t.Errorf("k 1..%d: staged sets price %v, want %v × the runs' %v", tc.maxK, b, tc.f, a)
		}
	}
	c := testCal()
	c.Criteria = staged
	b, err := c.JSON()
	if err != nil {
		t.Fatal(err)
	}
	back, err := Parse(b)
	if err != nil {
		t.Fatalf("calibration with stages: %v", err)
	}
	if got, want := Predict(w, back).Terms.Criteria, 2*Predict(w, testCal()).Terms.Criteria; math.Abs(got-want) > 1e-9*want {
		t.Errorf("Predict with stages 2× the runs' price: criteria %v, want %v", got, want)
	}
}
