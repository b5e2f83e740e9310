package main

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/cost"
)

// TestPlanJSON: plan --json carries the top-level numbers a job reads, the cost-model terms,
// the worker table (1, 2, 4, 8) and the 1×/10×/100× rows, and beside them the timed figure, whose
// probe read at most a twentieth of the rows beyond its first unit.
func TestPlanJSON(t *testing.T) {
	o := smallLoads()
	o.Rows = 60000
	dir := lake(t, o)
	code, out, errs := run(t, append(append([]string{"plan", "--json"}, quickFlags...), dir)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var p struct {
		Seconds *float64 `json:"predicted_seconds"`
		Peak    *int64   `json:"predicted_peak_bytes"`
		Terms   map[string]float64
		Memory  map[string]int64
		Workers []struct {
			Workers int     `json:"workers"`
			Seconds float64 `json:"predicted_seconds"`
		} `json:"by_workers"`
		Scales []struct {
			DataScale float64 `json:"data_scale"`
			Rows      int64   `json:"rows"`
			Seconds   float64 `json:"predicted_seconds"`
		} `json:"by_data_scale"`
		Calibration struct {
			Probe *struct{} `json:"probe"`
		} `json:"calibration"`
		Timed *struct {
			Seconds     float64 `json:"predicted_seconds"`
			Difference  float64 `json:"difference"`
			Calibration struct {
				Probe *struct {
					Units int   `json:"units"`
					Rows  int64 `json:"rows"`
				} `json:"probe"`
			} `json:"calibration"`
		} `json:"timed"`
		Workload struct{ Rows int64 }
	}
	if err := json.Unmarshal([]byte(out), &p); err != nil {
		t.Fatalf("not JSON: %v\n%s", err, out)
	}
	if p.Seconds == nil || !(*p.Seconds > 0) || p.Peak == nil || !(*p.Peak > 0) {
		t.Fatalf("predicted_seconds %v, predicted_peak_bytes %v; want positive numbers", p.Seconds, p.Peak)
	}
	sum := p.Terms["open_seconds"] + p.Terms["probe_seconds"] + p.Terms["pass_seconds"] + p.Terms["criteria_seconds"]
	if d := sum - *p.Seconds; d > 1e-9 || d < -1e-9 {
		t.Errorf("terms sum to %v, predicted_seconds is %v", sum, *p.Seconds)
	}
	if p.Memory["peak_bytes"] != *p.Peak {
		t.Errorf("memory peak %d differs from predicted_peak_bytes %d", p.Memory["peak_bytes"], *p.Peak)
	}
	if len(p.Workers) != 4 || p.Workers[0].Workers != 1 || p.Workers[3].Workers != 8 {
		t.Errorf("worker table %+v, want 1, 2, 4, 8", p.Workers)
	}
	if len(p.Scales) != 3 || p.Scales[1].Rows != 10*p.Workload.Rows || p.Scales[2].Rows != 100*p.Workload.Rows {
		t.Errorf("scale rows %+v for %d rows", p.Scales, p.Workload.Rows)
	}
	if p.Workload.Rows != int64(o.Rows) {
		t.Errorf("workload rows %d, want %d from the footers", p.Workload.Rows, o.Rows)
	}
	if p.Calibration.Probe != nil {
		t.Errorf("the plan's own figure carries a timed probe; it must be the calibrated one the estimate shows")
	}
	if p.Timed == nil {
		t.Fatalf("plan printed no timed figure")
	}
	if want := p.Timed.Seconds / *p.Seconds - 1; math.Abs(p.Timed.Difference-want) > 1e-9 {
		t.Errorf("timed difference %v, want %v from %v and %v s", p.Timed.Difference, want, p.Timed.Seconds, *p.Seconds)
	}
	pr := p.Timed.Calibration.Probe
	if pr == nil || pr.Units < 1 {
		t.Fatalf("no timed probe recorded: %+v", pr)
	}
	if pr.Units > 1 && pr.Rows > int64(o.Rows)/20 {
		t.Errorf("probe read %d rows in %d units, more than a twentieth of %d", pr.Rows, pr.Units, o.Rows)
	}
}

func TestPlanTable(t *testing.T) {
	dir := lake(t, smallLoads())
	for _, tc := range []struct {
		flags         []string
		want, wantNot []string
	}{
		{nil, []string{"calibrated:", "use this same figure", "timed probe:", "timed on this input", "seconds   timed"}, nil},
		{[]string{"--no-probe"}, []string{"calibrated:", "use this same figure"}, []string{"timed probe:", "timed on this input"}},
	} {
		t.Run(strings.Join(append([]string{"plan"}, tc.flags...), " "), func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "plan.json")
			args := append(append(append([]string{"plan", "--out", out}, tc.flags...), quickFlags...), dir)
			code, text, errs := run(t, args...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			for _, want := range append([]string{"== estimate with", "pass: scan", "pass: mini-batch feed", "criteria", "peak",
				"by workers", "by data size", "10×", "100×"}, tc.want...) {
				if !strings.Contains(text, want) {
					t.Errorf("plan output lacks %q:\n%s", want, text)
				}
			}
			for _, no := range tc.wantNot {
				if strings.Contains(text, no) {
					t.Errorf("plan output holds %q:\n%s", no, text)
				}
			}
			if b, err := os.ReadFile(out); err != nil || !json.Valid(b) {
				t.Errorf("--out did not write JSON: %v", err)
			}
		})
	}
}

func TestPlanErrors(t *testing.T) {
	dir := lake(t, smallLoads())
	for _, tc := range []struct {
		name string
		args []string
		code int
		want string
	}{
		{"no path", []string{"plan"}, ExitUsage, "no PATH"},
		{"missing file", []string{"plan", filepath.Join(dir, "nope.parquet")}, ExitInput, "nope.parquet"},
		{"unknown column", []string{"plan", "--columns", "h00,watts", dir}, ExitInput, "watts"},
		{"save-sketch", []string{"plan", "--save-sketch", "x.kgs", dir}, ExitUsage, "--save-sketch"},
		{"report", []string{"plan", "--report", "x.html", dir}, ExitUsage, "--report"},
		{"bad workers", []string{"plan", "--workers", "0", dir}, ExitUsage, "--workers"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, _, errs := run(t, tc.args...)
			if code != tc.code || !strings.Contains(errs, tc.want) {
				t.Errorf("exit %d, stderr %q; want exit %d naming %q", code, errs, tc.code, tc.want)
			}
			if lines := strings.Count(strings.TrimSpace(errs), "\n"); code == ExitInput && lines > 0 {
				t.Errorf("error is %d lines, want one: %q", lines+1, errs)
			}
		})
	}
}

// TestEstimateReportAndProjection: --report writes the page, and the JSON carries the measured
// throughput and the model's projection to 10× and 100× the input.
func TestEstimateReportAndProjection(t *testing.T) {
	dir := lake(t, smallLoads())
	page := filepath.Join(t.TempDir(), "r.html")
	code, out, errs := run(t, append(append([]string{"estimate", "--json", "--report", page}, quickFlags...), dir)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var res struct {
		Rows       int64
		Throughput *struct {
			RowsPerSecond  float64 `json:"rows_per_second"`
			BytesPerSecond float64 `json:"bytes_per_second"`
		}
		Projection []struct {
			DataScale float64 `json:"data_scale"`
			Rows      int64   `json:"rows"`
			Seconds   float64 `json:"predicted_seconds"`
		}
		Timings map[string]float64
	}
	if err := json.Unmarshal([]byte(out), &res); err != nil {
		t.Fatal(err)
	}
	if res.Throughput == nil || !(res.Throughput.RowsPerSecond > 0) || !(res.Throughput.BytesPerSecond > 0) {
		t.Errorf("throughput %+v", res.Throughput)
	}
	if len(res.Projection) != 3 || res.Projection[1].DataScale != 10 || res.Projection[2].DataScale != 100 {
		t.Fatalf("projection %+v", res.Projection)
	}
	// The 1× row is the model fitted to this run, so it reproduces the measured total.
	var measured float64
	for _, v := range res.Timings {
		measured += v
	}
	if d := res.Projection[0].Seconds - measured; d > 0.01*measured+1e-6 || d < -0.01*measured-1e-6 {
		t.Errorf("1× projection %v s, measured %v s", res.Projection[0].Seconds, measured)
	}
	if !(res.Projection[2].Seconds > res.Projection[1].Seconds && res.Projection[1].Seconds > res.Projection[0].Seconds) {
		t.Errorf("projection does not grow with the data: %+v", res.Projection)
	}
	b, err := os.ReadFile(page)
	if err != nil || !strings.Contains(string(b), "A cluster count is evidence for a person to review, not a fact.") {
		t.Errorf("report not written or lacks the caution: %v", err)
	}
	// A report into a missing directory fails before any reading, with the output exit code.
	code, _, errs = run(t, append(append([]string{"estimate", "--report", filepath.Join(dir, "no", "r.html")}, quickFlags...), dir)...)
	if code != ExitOutput || !strings.Contains(errs, "r.html") {
		t.Errorf("exit %d, %q; want %d naming the report", code, errs, ExitOutput)
	}
}

// TestProgressETA: the time left follows the model at the start of a stage and the measured pace
// at its end, and is unknown rather than zero once the model's time is used up.
func TestProgressETA(t *testing.T) {
	pred := modelTerms(2, 6, 2) // probe+open 2 s, pass 6 s, criteria 2 s
	for _, tc := range []struct {
		name string
		now  progressNow
		want float64
	}{
		{"before the pass: the model", progressNow{stage: kgauge.StageProbe, elapsed: 1, total: 100}, 9},
		{"start of pass: the model leads", progressNow{stage: kgauge.StagePass, elapsed: 2, rows: 1, total: 1000}, 0.999*6 + 0.001*0 + 2},
		{"half way, on the model's pace", progressNow{stage: kgauge.StagePass, elapsed: 5, inStage: 3, rows: 50, total: 100}, 0.5*3 + 0.5*3 + 2},
		{"half way, twice as slow", progressNow{stage: kgauge.StagePass, elapsed: 8, inStage: 6, rows: 50, total: 100}, 0.5*0 + 0.5*6 + 2},
		{"scoring, nothing measured", progressNow{stage: kgauge.StageCriteria, elapsed: 9, inStage: 1, rows: 100, total: 100}, 1},
		{"scoring, a quarter done in 3 s", progressNow{stage: kgauge.StageCriteria, elapsed: 11, inStage: 3, rows: 100, total: 100, scored: 0.25}, 0.25 * 9},
		{"scoring, model used up, nothing measured", progressNow{stage: kgauge.StageCriteria, elapsed: 15, inStage: 5, rows: 100, total: 100}, -1},
		{"past the model before the pass", progressNow{stage: kgauge.StageProbe, elapsed: 30, total: 100}, -1},
	} {
		got := progressETA(pred, tc.now)
		if d := got - tc.want; d > 0.05 || d < -0.05 {
			t.Errorf("%s: ETA %v, want %v", tc.name, got, tc.want)
		}
	}
	if got := progressETA(modelTerms(0, 0, 0), progressNow{stage: kgauge.StageProbe, elapsed: 1}); got != -1 {
		t.Errorf("no model, no rows: ETA %v, want -1", got)
	}
	if got := progressETA(modelTerms(0, 0, 0), progressNow{stage: kgauge.StageCriteria, inStage: 2, scored: 0.5}); got != 2 {
		t.Errorf("no model, half scored in 2 s: ETA %v, want 2", got)
	}
}

// modelTerms spreads before over open and probe.
func modelTerms(before, pass, criteria float64) cost.Terms {
	return cost.Terms{Open: before / 2, Probe: before / 2, Pass: pass, Criteria: criteria}
}

// TestTimedAdvice checks which figure plan says to expect the run nearer, and why: the calibrated
// one, for the reason that fits the range. bench/plan-accuracy.md (round 8 of issue 15) measured
// the timed figure +131% and the calibrated +17% at --max-k 40, because single-k runs fit every
// k's mixtures while the estimate stops them; and within the default range the timed figure 24–68%
// short on every input, the calibrated one nearer on 7 of 8, because single-k runs miss the
// work a whole range of k adds.
func TestTimedAdvice(t *testing.T) {
	for _, c := range []struct {
		maxK int
		diff float64
		want string // a phrase the line must hold; "" for no line
	}{
		{20, 0.10, ""},
		{20, -0.25, ""},
		{20, 0.40, "nearer the calibrated figure"},
		{10, -0.30, "miss what a whole range of k does"},
		{40, 1.22, "nearer the calibrated figure"},
		{110, -0.50, "above k = 20"},
		{40, 0.20, ""},
	} {
		got := timedAdvice(c.maxK, c.diff)
		if c.want == "" {
			if got != "" {
				t.Errorf("max-k %d, %+.0f%%: got %q, want no line", c.maxK, 100*c.diff, got)
			}
			continue
		}
		if !strings.Contains(got, c.want) || !strings.HasSuffix(got, "\n") {
			t.Errorf("max-k %d, %+.0f%%: got %q, want a line with %q", c.maxK, 100*c.diff, got, c.want)
		}
	}
}
