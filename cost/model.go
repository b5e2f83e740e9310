package cost

import (
	"bytes"
	_ "embed"
	"encoding/json"
	"errors"
	"fmt"
	"math"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/sketch"
)

// Calibration holds the measured constants of the cost model. Rates are per worker (one goroutine on
// one core); times are seconds; sizes are bytes.
type Calibration struct {
	Source  string `json:"source"`  // how the constants were obtained
	Machine string `json:"machine"` // where: CPU count, GOARCH, Go version
	Command string `json:"command"` // the command that wrote them

	OpenFileSeconds float64 `json:"open_file_seconds"` // reading one footer or schema
	OpenUnitSeconds float64 `json:"open_unit_seconds"` // opening one row group or record batch
	ScanBytesPerSec float64 `json:"scan_bytes_per_second"`
	AddSecPerValue  float64 `json:"add_seconds_per_value"` // sketch.Add per row and column, steady state
	KernelPKDPerSec float64 `json:"kernel_pkd_per_second"` // mini-batch points × k × d per second

	// Criteria are criteria runs timed at several column counts (Dims, ascending) on data of
	// several cluster counts, each as a plan's timed probe times its own (CriteriaProbe): without a
	// probe, the criteria stage is priced from them (CriteriaFromWidths).
	Criteria []CriteriaProbe `json:"criteria_runs"`

	// PassOverhead is the measured pass ÷ the pass priced from the probe's rates, for the parts that
	// grow with the data (unit opens, scan, sketch); FeedOverhead is the same for the part that does
	// not (the mini-batch feed, capped at MiniBatchRows, and the final merge). Both are fitted from
	// passes over two sizes of one shape (0 means 1).
	PassOverhead     float64 `json:"pass_overhead"`
	FeedOverhead     float64 `json:"feed_overhead,omitempty"`
	ProbeOverhead    float64 `json:"probe_overhead"`    // the same for the estimate's own probe stage (0 means 1)
	ParallelFraction float64 `json:"parallel_fraction"` // p of Amdahl's law for the pass
	Cores            int     `json:"cores"`             // CPUs the constants were measured with

	PageBytes int64 `json:"page_bytes"` // page buffer held per column chunk being read
	BaseBytes int64 `json:"base_bytes"` // Go runtime, binary and footers

	// Probe records what a plan's timed probe replaced, for the report; empty for the defaults.
	Probe *ProbeTiming `json:"probe,omitempty"`
}

// ProbeTiming is what a plan's short timed read measured on the real input.
type ProbeTiming struct {
	Units           int     `json:"units"`          // whole units read
	Rows            int64   `json:"rows"`           // rows read
	Bytes           int64   `json:"bytes"`          // unit bytes read
	ReadSeconds     float64 `json:"read_seconds"`   // reading them
	OpenSeconds     float64 `json:"open_seconds"`   // opening them
	SketchSeconds   float64 `json:"sketch_seconds"` // timing the sketch, steady state and with full feed
	CriteriaSeconds float64 `json:"criteria_seconds"`

	// Criteria is what the full-size criteria runs on a sketch of the probe rows measured; with it,
	// Predict prices the criteria stage from these runs instead of from the calibration's.
	Criteria *CriteriaProbe `json:"criteria,omitempty"`
}

// CriteriaRun is one timed criteria run of a probe: the criteria for the single k K, on one
// worker, with the estimate's option sizes (restarts, anchors, gap references and sample), without
// the Ward linkage unless Ward.
type CriteriaRun struct {
	K       int     `json:"k"`
	Ward    bool    `json:"ward,omitempty"`        // the run included the Ward linkage
	Leaves  int     `json:"ward_leaves,omitempty"` // its leaves (criteria.Result.Ward.Leaves)
	Seconds float64 `json:"seconds"`
}

// CriteriaProbe is a probe's set of criteria runs: k = 1 without the Ward linkage (the setup every
// run pays: gap references, PCA box; k = 1 itself costs almost nothing), k = 1 with it, and without
// it the smallest k >= 2 of the range, its middle and its largest k.
type CriteriaProbe struct {
	Dims     int           `json:"dims,omitempty"`     // columns the criteria ran in (after any reduction)
	Clusters int           `json:"clusters,omitempty"` // clusters of the generated data (calibration runs only)
	Coreset  int           `json:"coreset"`            // coreset points of the probe's sketch
	Parallel int           `json:"parallel"`           // runs timed side by side, as the estimate runs its k
	Runs     []CriteriaRun `json:"runs"`               // ascending k

	// Stages are whole criteria stages timed on the same file (calibration runs only; ascending
	// MaxK): what the runs miss, CriteriaFromWidths takes from them (StageFactor).
	Stages []CriteriaStage `json:"stages,omitempty"`
}

// CriteriaStage is one whole criteria stage timed as an estimate runs it (kgauge.Evaluate: the
// summary, any reduction, and the criteria for every k of MinK..MaxK with the Ward linkage on
// Workers goroutines).
type CriteriaStage struct {
	MinK    int     `json:"min_k"`
	MaxK    int     `json:"max_k"`
	Workers int     `json:"workers"`
	Seconds float64 `json:"seconds"`
}

//go:embed calibration.json
var defaultJSON []byte

// Default returns the committed benchmark-derived constants (calibration.json).
func Default() Calibration {
	c, err := Parse(defaultJSON)
	if err != nil {
		panic("cost: embedded calibration.json: " + err.Error())
	}
	return c
}

// Parse decodes and checks a calibration file.
func Parse(b []byte) (Calibration, error) {
	var c Calibration
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&c); err != nil {
		return c, fmt.Errorf("cost: calibration: %w", err)
	}
	return c, c.Validate()
}

// Validate reports the first constant that is missing or out of range.
func (c Calibration) Validate() error {
	for _, f := range []struct {
		name string
		v    float64
	}{{"scan_bytes_per_second", c.ScanBytesPerSec}, {"add_seconds_per_value", c.AddSecPerValue},
		{"kernel_pkd_per_second", c.KernelPKDPerSec}} {
		if !(f.v > 0) || math.IsInf(f.v, 0) {
			return fmt.Errorf("cost: calibration %s must be a positive number, got %v", f.name, f.v)
		}
	}
	if len(c.Criteria) == 0 {
		return errors.New("cost: calibration criteria_runs is empty: the criteria cannot be priced without a probe")
	}
	for i, cp := range c.Criteria {
		switch {
		case cp.Dims < 1 || (i > 0 && cp.Dims < c.Criteria[i-1].Dims):
			return fmt.Errorf("cost: calibration criteria_runs: dims must be positive and ascending, got %d after %d",
				cp.Dims, c.Criteria[max(i-1, 0)].Dims)
		case !cp.usable():
			return fmt.Errorf("cost: calibration criteria_runs at %d dims: want k = 1 with and without the Ward linkage, with its leaves, and no negative time", cp.Dims)
		}
		for j, st := range cp.Stages {
			if st.MinK < 1 || st.MaxK < st.MinK || st.Workers < 1 || !(st.Seconds > 0) || math.IsInf(st.Seconds, 0) ||
				(j > 0 && st.MaxK <= cp.Stages[j-1].MaxK) {
				return fmt.Errorf("cost: calibration criteria_runs at %d dims: bad stage %+v (want 1 <= min_k <= max_k, max_k ascending, workers >= 1, positive seconds)", cp.Dims, st)
			}
		}
	}
	switch {
	case c.OpenFileSeconds < 0 || c.OpenUnitSeconds < 0 || c.PassOverhead < 0 || c.FeedOverhead < 0 || c.ProbeOverhead < 0:
		return errors.New("cost: calibration times must not be negative")
	case !(c.ParallelFraction >= 0 && c.ParallelFraction <= 1):
		return fmt.Errorf("cost: calibration parallel_fraction must be in [0, 1], got %v", c.ParallelFraction)
	case c.Cores < 1:
		return fmt.Errorf("cost: calibration cores must be at least 1, got %d", c.Cores)
	case c.PageBytes < 0 || c.BaseBytes < 0:
		return errors.New("cost: calibration sizes must not be negative")
	}
	return nil
}

// JSON encodes c as calibration.json is written.
func (c Calibration) JSON() ([]byte, error) {
	b, err := json.MarshalIndent(c, "", "  ")
	return append(b, '\n'), err
}

// Workload is what the model needs to know about a run: the input's shape from its metadata and the
// estimate's settings.
type Workload struct {
	Files, Units int
	Rows         int64 // from metadata; when unknown (Arrow IPC) estimated from Bytes
	Bytes        int64 // stream unit bytes of the selected columns
	Dims         int
	Workers      int
	Cores        int // CPUs available; 0 means the calibration's

	MinK, MaxK    int
	Coreset       int
	Sample        int
	MiniBatchRows int64
	BatchRows     int
	ProbeRows     int
	ProbeUnits    int
	Restarts      int
	Anchors       int
	GapRefs       int
	GapSample     int
	GapRestarts   int
	WardLeaves    int // leaves of the criteria's Ward linkage (0: as the probe's run had)
	CriteriaDims  int // columns the criteria run in, after a wide input's reduction (0: Dims)

	// Sizes owned by other packages, filled in by whoever describes the run (kgauge.WorkloadOf):
	// 0 takes the owner's default.
	MiniBatchSize   int // rows of a sketch's mini-batch buffer (sketch.Config.MiniBatchSize)
	CriteriaWorkers int // goroutines across k in the criteria stage (0: Cores)
	GCPercent       int // the collector's target while the run holds its peak (0: GCPercent)
}

// Validate reports a workload the model cannot price.
func (w Workload) Validate() error {
	switch {
	case w.Dims < 1:
		return fmt.Errorf("cost: workload needs at least one column, got %d", w.Dims)
	case w.Workers < 1:
		return fmt.Errorf("cost: workload needs at least one worker, got %d", w.Workers)
	case w.MinK < 1 || w.MaxK < w.MinK:
		return fmt.Errorf("cost: bad k range %d..%d", w.MinK, w.MaxK)
	case w.Rows < 0 || w.Bytes < 0:
		return errors.New("cost: workload rows and bytes must not be negative")
	}
	return nil
}

// Scaled returns w with f times the rows, bytes, units and files (f = 10 for "ten times the data").
func (w Workload) Scaled(f float64) Workload {
	w.Rows = int64(math.Round(float64(w.Rows) * f))
	w.Bytes = int64(math.Round(float64(w.Bytes) * f))
	w.Units = max(1, int(math.Round(float64(w.Units)*f)))
	w.Files = max(1, int(math.Round(float64(w.Files)*f)))
	return w
}

// SumK is Σk over the candidate range.
func (w Workload) SumK() int64 {
	return int64(w.MaxK+w.MinK) * int64(w.MaxK-w.MinK+1) / 2
}

// Speedup is Amdahl's law: the speed-up of a job with parallel fraction p on n workers.
func Speedup(p float64, n int) float64 {
	if n < 1 {
		n = 1
	}
	return 1 / ((1 - p) + p/float64(n))
}

// Terms are the predicted seconds of each stage and of the pass's parts.
type Terms struct {
	Open     float64 `json:"open_seconds"`
	Probe    float64 `json:"probe_seconds"`
	Scan     float64 `json:"scan_seconds"`   // reading and decoding, one worker
	Sketch   float64 `json:"sketch_seconds"` // sketch.Add without the feed, one worker
	Feed     float64 `json:"feed_seconds"`   // mini-batch k-means on the fed rows, one worker
	Pass     float64 `json:"pass_seconds"`   // (scan + sketch + feed) / speed-up
	Criteria float64 `json:"criteria_seconds"`
	Speedup  float64 `json:"pass_speedup"` // effective workers of the pass
}

// Memory are the predicted bytes of the peak's parts (PredictMemory).
type Memory struct {
	Base        int64 `json:"base_bytes"`
	Sketches    int64 `json:"sketch_bytes"`      // all workers' sketches during the pass
	ReadBuffers int64 `json:"read_buffer_bytes"` // read batches, all workers
	PageBuffers int64 `json:"page_buffer_bytes"` // library pages, one per column chunk per worker
	Probe       int64 `json:"probe_bytes"`       // probe rows held before the pass
	Criteria    int64 `json:"criteria_bytes"`    // merged sketch, summary and the criteria's working set
	Live        int64 `json:"live_bytes"`        // the largest stage: max(probe, pass, criteria)
	Peak        int64 `json:"peak_bytes"`
}

// Prediction is the model's answer for one workload.
type Prediction struct {
	Seconds   float64 `json:"predicted_seconds"`
	PeakBytes int64   `json:"predicted_peak_bytes"`
	Terms     Terms   `json:"terms"`
	Memory    Memory  `json:"memory"`
}

// rowsOf returns the rows of w, estimated from its bytes when the metadata does not say.
func (w Workload) rowsOf() float64 {
	if w.Rows > 0 || w.Bytes == 0 {
		return float64(w.Rows)
	}
	return float64(w.Bytes) / float64(8*w.Dims)
}

// Predict prices w with the constants c.
func Predict(w Workload, c Calibration) Prediction {
	var p Prediction
	d := float64(w.Dims)
	rows := w.rowsOf()
	cores := w.Cores
	if cores < 1 {
		cores = c.Cores
	}
	t := &p.Terms
	t.Open = float64(w.Files) * c.OpenFileSeconds

	// The probe reads ProbeRows rows spread over ProbeUnits units, then seeds k-means++ for every k
	// on up to sketch.ProbeSeedRows of them (one distance per row, centre and column).
	probeUnits := min(w.Units, max(w.ProbeUnits, 1))
	probeRows := math.Min(rows, float64(w.ProbeRows))
	bytesPerRow := 0.0
	if rows > 0 {
		bytesPerRow = float64(w.Bytes) / rows
	}
	seedRows := math.Min(probeRows, sketch.ProbeSeedRows)
	// The overhead is fitted on the calibration file, whose unit opens are a small share of the
	// probe stage; it multiplies the read and the seeding only, so that a timed probe's own open time
	// (6 ms a unit on the demo lake against the calibration's 0.3 ms) is not multiplied by it (that
	// had priced the demo lake's probe stage at 7.7 s against 0.7 s measured).
	t.Probe = float64(probeUnits)*c.OpenUnitSeconds + (probeRows*bytesPerRow/c.ScanBytesPerSec+
		seedRows*float64(w.SumK())*d/c.KernelPKDPerSec)*Overhead(c.ProbeOverhead)

	fed := math.Min(rows, float64(w.MiniBatchRows))
	over := Overhead(c.PassOverhead)
	t.Scan = (float64(w.Units)*c.OpenUnitSeconds + float64(w.Bytes)/c.ScanBytesPerSec) * over
	t.Sketch = rows * d * c.AddSecPerValue * over
	t.Feed = fed * float64(w.SumK()) * d / c.KernelPKDPerSec * Overhead(c.FeedOverhead)
	n := min(w.Workers, cores, max(w.Units, 1))
	t.Speedup = Speedup(c.ParallelFraction, n)
	t.Pass = (t.Scan + t.Sketch + t.Feed) / t.Speedup

	if s, ok := CriteriaFromRuns(w, c.probeCriteria(), cores); ok {
		t.Criteria = s
	} else {
		t.Criteria, _ = CriteriaFromWidths(w, c.Criteria, cores)
	}
	p.Seconds = t.Open + t.Probe + t.Pass + t.Criteria

	p.Memory = PredictMemory(w, c)
	p.PeakBytes = p.Memory.Peak
	return p
}

// GCPercent is the collector's target (GOGC) the memory model assumes when a workload does not
// say: cmd/kgauge runs estimates at 50 (DEVELOPERS.md, measured design decisions).
const GCPercent = 50

// PredictMemory is the one memory model of a run: what plan prints, what --memory is checked
// against, what the projection and the report show. The run holds its peak in one of three
// stages, each the live bytes of its parts; the heap grows to (1 + GOGC/100) times what is live
// before the collector runs, and the runtime, binary and footers (c.BaseBytes) come on top:
//
//	probe    = probe rows × d × 8
//	pass     = W × (sketch.HeldBytes + read buffer + page buffers)
//	criteria = merged sketch + scaled summary (coreset, sample, covariance) + criteria.WorkingBytes
//	peak     = base + (1 + GOGC/100) × max(probe, pass, criteria)
//
// The sizes come from the packages that own them (sketch.HeldBytes, criteria.WorkingBytes), so a
// change of their layout changes the prediction; the width terms (d×d cross products, covariance,
// eigen decompositions, whitening, full-covariance mixtures) are inside them.
func PredictMemory(w Workload, c Calibration) Memory {
	var mem Memory
	rows := w.rowsOf()
	D := int64(w.Dims)
	W := int64(min(w.Workers, max(w.Units, 1)))
	cfg := sketch.Config{MinK: w.MinK, MaxK: w.MaxK, CoresetSize: w.Coreset, SampleSize: w.Sample,
		MiniBatchSize: w.MiniBatchSize, MiniBatchRows: w.MiniBatchRows}
	held := sketch.HeldBytes(cfg, w.Dims, w.BatchRows)
	mem.Base = c.BaseBytes
	mem.Sketches = W * held
	mem.ReadBuffers = W * int64(w.BatchRows) * D * 8
	// A worker holds a page of every column as stored and as decoded: the decoded size (8 bytes a
	// value) is what a compressible column needs, whatever its stored bytes (the demo lake, stored
	// at 0.24 MiB a column chunk, peaked as high as a file of incompressible values at 0.5 MiB).
	chunk := int64(0)
	if w.Units > 0 {
		chunk = max(w.Bytes/int64(w.Units)/max(D, 1), int64(rows)/int64(w.Units)*8)
	}
	mem.PageBuffers = W * D * 2 * min(c.PageBytes, max(chunk, 1))
	mem.Probe = int64(math.Min(rows, float64(w.ProbeRows))) * D * 8
	m := min(w.Coreset, int(math.Max(rows, 1)))
	n := min(w.Sample, int(math.Max(rows, 1)))
	summary := int64(m)*(D+1)*8 + int64(n)*D*8 + D*D*8
	co := criteria.Options{MinK: w.MinK, MaxK: w.MaxK, Restarts: w.Restarts, Anchors: w.Anchors,
		GapRefs: w.GapRefs, GapSample: w.GapSample, GapRestarts: w.GapRestarts}
	workers := w.CriteriaWorkers
	if workers < 1 {
		workers = max(w.Cores, c.Cores, 1)
	}
	mem.Criteria = held + summary + criteria.WorkingBytes(co, m, n, w.Dims, workers)
	gc := w.GCPercent
	if gc <= 0 {
		gc = GCPercent
	}
	live := max(mem.Probe, mem.Sketches+mem.ReadBuffers+mem.PageBuffers, mem.Criteria)
	mem.Live = live
	mem.Peak = mem.Base + live*int64(100+gc)/100
	return mem
}

// probeCriteria returns the probe's criteria runs, if any.
func (c Calibration) probeCriteria() *CriteriaProbe {
	if c.Probe == nil {
		return nil
	}
	return c.Probe.Criteria
}

// CriteriaFromRuns prices the criteria stage of w from a probe's criteria runs on cores CPUs, and
// reports false when the runs cannot price it (none, or none of k = 1 with and without the Ward
// linkage).
//
// The stage is its setup, then one job for the Ward linkage and one per k from the largest down on
// min(cores, jobs) workers, each taking the next job when it is free (criteria.Evaluate); it takes
// the setup plus the last finish of that schedule (Makespan). The setup is the k = 1 run without
// the Ward linkage; a k's job is its run less the setup, and a k between two runs gets the linear
// interpolation of theirs (a k's cost is flat while k is below the data's clusters and grows beyond
// them, which the middle run catches); below the smallest run k ≥ 2 it is that run's, beyond the
// largest it follows the line through the last two (never falling); k = 1 costs nothing beyond the
// setup. The Ward job is the k = 1 run with the linkage less the setup, × w.WardLeaves ÷ that
// run's leaves (the linkage's k-means fit is linear in its centres). When the estimate's coreset
// is larger than the probe's, every part grows in proportion (each criterion is linear in the
// coreset points it visits).
func CriteriaFromRuns(w Workload, cp *CriteriaProbe, cores int) (float64, bool) {
	if cp == nil || !cp.usable() {
		return 0, false
	}
	base, ward := cp.find(1, false), cp.find(1, true)
	var ks []int
	var own []float64
	for _, r := range cp.Runs {
		if r.K >= 2 && !r.Ward && (len(ks) == 0 || r.K > ks[len(ks)-1]) {
			ks = append(ks, r.K)
			own = append(own, math.Max(0, r.Seconds-base.Seconds))
		}
	}
	part := func(k int) float64 {
		switch {
		case k < 2 || len(ks) == 0:
			return 0
		case k <= ks[0]:
			return own[0]
		}
		for i := 1; i < len(ks); i++ {
			if k <= ks[i] {
				f := float64(k-ks[i-1]) / float64(ks[i]-ks[i-1])
				return own[i-1] + f*(own[i]-own[i-1])
			}
		}
		last := len(ks) - 1
		if last == 0 {
			return own[0]
		}
		slope := math.Max(0, (own[last]-own[last-1])/float64(ks[last]-ks[last-1]))
		return own[last] + slope*float64(k-ks[last])
	}
	scale := 1.0
	if m := min(w.Coreset, int(math.Max(w.rowsOf(), 1))); cp.Coreset > 0 && m > 0 {
		scale = float64(m) / float64(cp.Coreset)
	}
	leaves := w.WardLeaves
	if leaves < 1 {
		leaves = ward.Leaves
	}
	jobs := []float64{math.Max(0, ward.Seconds-base.Seconds) * float64(leaves) / float64(ward.Leaves) * scale}
	for k := w.MaxK; k >= w.MinK; k-- {
		jobs = append(jobs, part(k)*scale)
	}
	return base.Seconds*scale + Makespan(jobs, max(cores, 1)), true
}

// usable reports whether the runs can price a criteria stage: they hold k = 1 with and without the
// Ward linkage (the first with its leaves) and no negative or NaN time.
func (cp *CriteriaProbe) usable() bool {
	for _, r := range cp.Runs {
		if !(r.Seconds >= 0) || math.IsInf(r.Seconds, 0) {
			return false
		}
	}
	ward := cp.find(1, true)
	return cp.find(1, false) != nil && ward != nil && ward.Leaves >= 1
}

// find returns the first run of k with or without the Ward linkage, or nil.
func (cp *CriteriaProbe) find(k int, ward bool) *CriteriaRun {
	for i, r := range cp.Runs {
		if r.K == k && r.Ward == ward {
			return &cp.Runs[i]
		}
	}
	return nil
}

// StageFactor is what the whole stage took ÷ what CriteriaFromRuns prices from cp's runs for the
// same stage (its k range, its workers, cp's coreset and width), for a range up to maxK: the
// factor of each of cp.Stages, interpolated linearly over the largest k between two stages and
// the nearest stage's beyond them; 1 without stages.
//
// The runs time each k alone, so they miss what only a range of k does: the fit path's sweeps
// (each k started again from its neighbours' fits until none improves, criteria/fits.go), which
// run largely one after another, and the pool's idle slots while the main fit path holds the
// per-k scores back (DEVELOPERS.md, issue 16).
func (cp *CriteriaProbe) StageFactor(maxK int) float64 {
	type point struct{ k, f float64 }
	var pts []point
	for _, st := range cp.Stages {
		m := max(cp.Coreset, 1)
		sw := Workload{Dims: max(cp.Dims, 1), MinK: st.MinK, MaxK: st.MaxK, Rows: int64(m), Coreset: m,
			WardLeaves: criteria.WardLeaves(m, st.MaxK)}
		p, ok := CriteriaFromRuns(sw, cp, st.Workers)
		if ok && p > 0 && st.Seconds > 0 {
			pts = append(pts, point{float64(st.MaxK), st.Seconds / p})
		}
	}
	switch {
	case len(pts) == 0:
		return 1
	case float64(maxK) <= pts[0].k:
		return pts[0].f
	}
	for i := 1; i < len(pts); i++ {
		if float64(maxK) <= pts[i].k {
			a, b := pts[i-1], pts[i]
			return a.f + (float64(maxK)-a.k)/(b.k-a.k)*(b.f-a.f)
		}
	}
	return pts[len(pts)-1].f
}

// Width exponents of CriteriaFromWidths beyond the calibrated widths: the stage never gets cheaper
// with more columns, and grows at most as d³ (its eigen decompositions; every other part is at
// most d²).
const (
	minWidthExponent = 0
	maxWidthExponent = 3
)

// CriteriaFromWidths prices the criteria stage of w from criteria runs timed at several column
// counts (sets, ascending Dims; the calibration's): each set prices w as CriteriaFromRuns does,
// times the set's StageFactor (its whole stages measured ÷ priced from its runs), the sets of
// one width (data of different cluster counts) give the mean of their prices, and the stage at w's criteria width d (w.CriteriaDims, or w.Dims) is interpolated between the two widths
// around d as a power of d, t = t₁·(d/d₁)^e with e = ln(t₂/t₁)/ln(d₂/d₁): the stage has parts
// that do not grow with the columns and parts that grow as d or d², so neither a line through
// zero nor one through the two points holds over a decade of widths. Beyond the widths measured
// it follows the nearest two (e clamped to [0, 3]); with one width, t grows as d. It reports false
// when no set can price the stage.
//
// The mean over cluster counts stands for data whose clusters are unknown: a k's cost is flat
// while k is below the data's clusters and grows beyond them (five-fold from k = 8 to 12 at 64
// columns on 8 clusters), which only a probe of the input can see.
func CriteriaFromWidths(w Workload, sets []CriteriaProbe, cores int) (float64, bool) {
	d := w.CriteriaDims
	if d < 1 {
		d = w.Dims
	}
	type point struct{ d, t float64 }
	var pts []point
	n := 0 // sets averaged into the last point
	for i := range sets {
		t, ok := CriteriaFromRuns(w, &sets[i], cores)
		if !ok || sets[i].Dims < 1 || !(t > 0) {
			continue
		}
		t *= sets[i].StageFactor(w.MaxK)
		if last := len(pts) - 1; last >= 0 && pts[last].d == float64(sets[i].Dims) {
			pts[last].t = (pts[last].t*float64(n) + t) / float64(n+1)
			n++
			continue
		}
		pts = append(pts, point{float64(sets[i].Dims), t})
		n = 1
	}
	switch len(pts) {
	case 0:
		return 0, false
	case 1:
		return pts[0].t * float64(d) / pts[0].d, true
	}
	i := 0
	for i < len(pts)-2 && float64(d) > pts[i+1].d {
		i++
	}
	a, b := pts[i], pts[i+1]
	e := math.Log(b.t/a.t) / math.Log(b.d/a.d)
	switch {
	case float64(d) > b.d:
		a, e = b, math.Max(minWidthExponent, math.Min(maxWidthExponent, e)) // from the widest set on
	case float64(d) < a.d:
		e = math.Max(minWidthExponent, math.Min(maxWidthExponent, e))
	}
	return a.t * math.Pow(float64(d)/a.d, e), true
}

// Makespan is the time n workers take to run jobs of the given lengths in order, each worker taking
// the next job as soon as it is free.
func Makespan(jobs []float64, n int) float64 {
	free := make([]float64, max(1, min(n, len(jobs))))
	for _, j := range jobs {
		i := 0
		for t := range free {
			if free[t] < free[i] {
				i = t
			}
		}
		free[i] += j
	}
	end := 0.0
	for _, f := range free {
		end = math.Max(end, f)
	}
	return end
}

// Overhead reads an overhead factor, where 0 (absent) means 1.
func Overhead(f float64) float64 {
	if f > 0 {
		return f
	}
	return 1
}

// Row is one line of a scaling table: the prediction for a number of workers or a multiple of the data.
type Row struct {
	Workers   int     `json:"workers"`
	DataScale float64 `json:"data_scale"`
	Rows      int64   `json:"rows"`
	Bytes     int64   `json:"bytes"`
	Seconds   float64 `json:"predicted_seconds"`
	PeakBytes int64   `json:"predicted_peak_bytes"`
	Speedup   float64 `json:"pass_speedup"`
}

// WorkerTable predicts w with each number of workers.
func WorkerTable(w Workload, c Calibration, workers ...int) []Row {
	var rows []Row
	for _, n := range workers {
		v := w
		v.Workers = n
		p := Predict(v, c)
		rows = append(rows, Row{Workers: n, DataScale: 1, Rows: v.Rows, Bytes: v.Bytes, Seconds: p.Seconds,
			PeakBytes: p.PeakBytes, Speedup: p.Terms.Speedup})
	}
	return rows
}

// ScaleTable predicts w with each multiple of its data.
func ScaleTable(w Workload, c Calibration, factors ...float64) []Row {
	var rows []Row
	for _, f := range factors {
		v := w.Scaled(f)
		p := Predict(v, c)
		rows = append(rows, Row{Workers: v.Workers, DataScale: f, Rows: v.Rows, Bytes: v.Bytes, Seconds: p.Seconds,
			PeakBytes: p.PeakBytes, Speedup: p.Terms.Speedup})
	}
	return rows
}
