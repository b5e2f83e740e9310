// Package capacity is the capacity planner: a short timed probe of the real input, the cost model
// (package cost) fitted to it or to a finished run, and the projection of a run to more data and
// more workers. It reads the inputs through the one open step of package kgauge (kgauge.Open) and
// starts its timings from the estimate's own probe (kgauge.ProbeFromRows).
package capacity

import (
	"context"
	"errors"
	"fmt"
	"io"
	"runtime"
	"slices"
	"sync"
	"time"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/stream"
)

// PlanWorkers is the worker counts of a plan's scaling table.
var PlanWorkers = []int{1, 2, 4, 8}

// PlanScales is the data multiples of a plan's and an estimate's projection.
var PlanScales = []float64{1, 10, 100}

// Plan is what Forecast predicts for an estimate of the same inputs and options.
type Plan struct {
	Input       *kgauge.Input    `json:"input"`
	Workload    cost.Workload    `json:"workload"`
	Calibration cost.Calibration `json:"calibration"`
	cost.Prediction
	Workers     []cost.Row `json:"by_workers"`
	Scales      []cost.Row `json:"by_data_scale"`
	Cores       int        `json:"cores"`
	PlanSeconds float64    `json:"plan_seconds"` // what the plan itself took
	Notes       []string   `json:"notes"`
}

// Forecast reads only the footers and metadata of the data files named by paths and a few whole row
// groups (at most a twentieth of the rows), times that read, sketch.Add and a few full-size criteria
// runs on the rows read, and predicts the wall time and peak memory of Estimate with opt on this
// machine.
// With probe false it skips the timed read and uses the committed calibration alone.
func Forecast(ctx context.Context, paths []string, opt kgauge.Options, probe bool) (*Plan, error) {
	start := time.Now()
	op, err := kgauge.Open(paths, opt)
	if err != nil {
		return nil, err
	}
	ds := op.Dataset
	defer ds.Close()
	opt = op.Options
	cal := cost.Default()
	if probe {
		if cal, err = TimedProbe(ctx, ds, opt, cal); err != nil {
			return nil, err
		}
	}
	p := &Plan{Input: op.Input, Workload: kgauge.WorkloadOf(ds, opt), Calibration: cal, Cores: runtime.NumCPU()}
	p.Prediction = cost.Predict(p.Workload, cal)
	p.Workers = cost.WorkerTable(p.Workload, cal, PlanWorkers...)
	p.Scales = cost.ScaleTable(p.Workload, cal, PlanScales...)
	if p.Cores <= 2 {
		p.Notes = append(p.Notes, fmt.Sprintf("this machine has %d CPUs: more than %d workers gain nothing", p.Cores, p.Cores))
	}
	if opt.Workers > len(ds.Units) {
		p.Notes = append(p.Notes, fmt.Sprintf("only %d units (row groups, batches): at most %d workers are busy", len(ds.Units), len(ds.Units)))
	}
	p.PlanSeconds = time.Since(start).Seconds()
	return p, nil
}

// Probe limits of TimedProbe.
const (
	probeMaxUnits  = 3
	probeShare     = 20      // read at most 1/probeShare of the rows
	probeKeepRows  = 1 << 17 // rows kept in memory for the sketch and criteria timings
	probeFeedRows  = 1 << 15 // rows fed to mini-batch k-means when timing the kernel
	probeMinTiming = 0.05    // seconds of steady-state sketch.Add to time at least
)

// TimedProbe reads a few whole units of ds in the seeded order the estimate uses (at most
// probeMaxUnits and, beyond the first, no more than a twentieth of the rows; of a unit of unknown
// length, an Arrow batch or stream, at most probeKeepRows rows), times the read,
// sketch.Add with and without the mini-batch feed, and the criteria for a few k at the estimate's
// option sizes on a sketch of the rows read (timeCriteria), and returns cal with those machine- and
// file-dependent rates replaced and the criteria runs in cal.Probe.Criteria, from which
// cost.Predict prices the criteria stage. The ratios that a short run cannot measure (pass and
// probe overheads, parallel fraction) stay those of cal. opt is the options kgauge.Open returned
// with ds (defaults filled in, fitted to the input).
func TimedProbe(ctx context.Context, ds *stream.Dataset, opt kgauge.Options, cal cost.Calibration) (cost.Calibration, error) {
	d := ds.Dims()
	rows, pt, err := readProbe(ctx, ds, stream.Shuffle(ds.Units, opt.Seed), opt.BatchRows, probeMaxUnits, ds.Rows/probeShare)
	if err != nil || pt.Units == 0 {
		return cal, err
	}
	cal.Source = "probe of the input; ratios from " + cal.Source
	cal.Probe = pt
	if pt.ReadSeconds > 0 && pt.Bytes > 0 {
		cal.ScanBytesPerSec = float64(pt.Bytes) / pt.ReadSeconds
	}
	cal.OpenUnitSeconds = pt.OpenSeconds / float64(pt.Units)
	n := len(rows) / d
	if n < max(2*opt.Criteria.MaxK, 64) {
		return cal, nil // too few rows to time the sketch; keep the defaults
	}
	t0 := time.Now()
	if err := timeSketch(&cal, rows, ds.Columns, opt); err != nil {
		return cal, err
	}
	pt.SketchSeconds = time.Since(t0).Seconds()
	t0 = time.Now()
	cp, err := runCriteria(ctx, rows, ds.Columns, opt, probeRuns(opt.Criteria.MinK, opt.Criteria.MaxK))
	if err != nil {
		return cal, err
	}
	pt.Criteria = cp
	pt.CriteriaSeconds = time.Since(t0).Seconds()
	return cal, nil
}

// readProbe reads whole units of ds in the order given (at most maxUnits and, beyond the first,
// no more than budget rows in all; of a unit of unknown length, an Arrow batch or stream, at most
// probeKeepRows rows), keeps the first probeKeepRows rows (row-major) and times the reader's calls
// only, not the keeping: the rows are allocated once (growing them inside the timed loop had cost
// four times the read). The first read of a process pays a one-time set-up (46 ms against 5–7 ms
// for every later read of an 8 MB row group, the same one included), which the estimate's pass
// does not, its probe stage having read first: one batch of the first unit is read before the
// clock starts.
func readProbe(ctx context.Context, ds *stream.Dataset, units []stream.Unit, batchRows, maxUnits int, budget int64) ([]float64, *cost.ProbeTiming, error) {
	d := ds.Dims()
	pt := &cost.ProbeTiming{}
	keep := int64(probeKeepRows)
	if ds.Rows > 0 {
		keep = min(keep, ds.Rows)
	}
	rows := make([]float64, 0, keep*int64(d))
	buf := make([]float64, max(1, batchRows)*d)
	if len(units) > 0 {
		r, err := ds.OpenUnit(units[0])
		if err != nil {
			return nil, pt, err
		}
		_, err = r.Read(buf)
		r.Close()
		if err != nil && err != io.EOF {
			return nil, pt, err
		}
	}
	for _, u := range units {
		if pt.Units >= maxUnits || (pt.Units >= 1 && (u.Rows < 0 || pt.Rows+u.Rows > budget)) {
			break
		}
		if err := ctx.Err(); err != nil {
			return nil, pt, err
		}
		t0 := time.Now()
		r, err := ds.OpenUnit(u)
		if err != nil {
			return nil, pt, err
		}
		t1 := time.Now()
		var got int64
		var read float64
		for {
			t2 := time.Now()
			n, err := r.Read(buf)
			read += time.Since(t2).Seconds()
			if len(rows) < probeKeepRows*d {
				rows = append(rows, buf[:min(n*d, probeKeepRows*d-len(rows))]...)
			}
			got += int64(n)
			if err == io.EOF {
				break
			}
			if err != nil {
				r.Close()
				return nil, pt, err
			}
			if u.Rows < 0 && got >= probeKeepRows {
				break // an Arrow batch or stream of unknown length: a part is enough
			}
		}
		pt.ReadSeconds += read
		r.Close()
		pt.OpenSeconds += t1.Sub(t0).Seconds()
		pt.Rows += got
		if u.Rows >= 0 {
			pt.Bytes += u.Bytes
		} else {
			pt.Bytes += got * int64(d) * 8 // the values decoded; Arrow IPC holds them uncompressed
		}
		pt.Units++
	}
	return rows, pt, nil
}

// CriteriaRuns times the criteria at opt's sizes on a sketch of the first rows of the data files
// named by paths (at most probeKeepRows, read in file order), as a plan's timed probe times its own
// (runCriteria): k = 1 with and without the Ward linkage and each k of ks without it; then the
// whole stage of an estimate of the same files for opt's smallest k to each of stages (timeStage,
// in cp.Stages). It is how kgauge-calibrate measures the criteria runs that price the stage
// without a probe.
func CriteriaRuns(ctx context.Context, paths []string, opt kgauge.Options, ks, stages []int) (*cost.CriteriaProbe, error) {
	op, err := kgauge.Open(paths, opt)
	if err != nil {
		return nil, err
	}
	ds := op.Dataset
	defer ds.Close()
	opt = op.Options
	rows, _, err := readProbe(ctx, ds, ds.Units, opt.BatchRows, len(ds.Units), probeKeepRows)
	if err != nil {
		return nil, err
	}
	if len(rows)/ds.Dims() < max(2*opt.Criteria.MaxK, 64) {
		return nil, fmt.Errorf("plan: %d rows are too few to time the criteria", len(rows)/ds.Dims())
	}
	runs := []cost.CriteriaRun{{K: 1, Ward: true}, {K: 1}}
	for _, k := range ks {
		if k >= 2 {
			runs = append(runs, cost.CriteriaRun{K: k})
		}
	}
	// The most expensive first, as probeRuns orders them, so the side-by-side runs end together.
	slices.SortStableFunc(runs, func(a, b cost.CriteriaRun) int { return b.K - a.K })
	cp, err := runCriteria(ctx, rows, ds.Columns, opt, runs)
	if err != nil {
		return nil, err
	}
	for _, maxK := range slices.Sorted(slices.Values(stages)) {
		st, err := timeStage(ctx, paths, opt, maxK)
		if err != nil {
			return nil, err
		}
		cp.Stages = append(cp.Stages, st)
	}
	return cp, nil
}

// timeStage runs an estimate of the files named by paths for opt's smallest k to maxK and returns
// its criteria stage (Timings.Criteria: the summary, any reduction and the criteria, the Ward
// linkage included, on opt's criteria workers), timed on the sketch the estimate's own pass built.
// A sketch of the rows built as the probe builds its own (probeSketch, a quarter of the mini-batch
// feed) had made the stage 8 to 10% dearer, timed back to back at 8 and 16 columns on 4 clusters.
func timeStage(ctx context.Context, paths []string, opt kgauge.Options, maxK int) (cost.CriteriaStage, error) {
	opt.Criteria.MaxK, opt.Sketch.MaxK = maxK, maxK
	res, _, err := kgauge.Estimate(ctx, paths, opt)
	if err != nil {
		return cost.CriteriaStage{}, fmt.Errorf("plan: criteria stage up to k = %d: %w", maxK, err)
	}
	workers := opt.Criteria.Workers
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	return cost.CriteriaStage{MinK: opt.Criteria.MinK, MaxK: maxK, Workers: workers, Seconds: res.Timings.Criteria}, nil
}

// probeSketch builds a sketch of rows at opt's sizes (of the estimate's coreset and sample sizes as
// far as the rows go), seeded as the estimate's probe seeds its own, feeding mini-batch k-means at
// most probeFeedRows of them.
func probeSketch(rows []float64, cols []string, opt kgauge.Options) (*sketch.Sketch, error) {
	n := len(rows) / len(cols)
	cfg := opt.Sketch
	cfg.Columns = cols
	cfg.ExpectedRows = int64(n)
	cfg.MiniBatchRows = int64(min(n, probeFeedRows))
	pr, err := kgauge.ProbeFromRows(rows, cols, opt)
	if err != nil {
		return nil, err
	}
	sk, err := sketch.New(cfg, pr)
	if err != nil {
		return nil, err
	}
	sk.Add(rows)
	return sk, nil
}

// timeSketch sets cal's sketch.AddColumns cost per value (steady state, once the coreset and sample
// are full) and its mini-batch kernel rate (a fresh sketch feeding every row, less one feeding none).
func timeSketch(cal *cost.Calibration, rows []float64, cols []string, opt kgauge.Options) error {
	d := len(cols)
	n := len(rows) / d
	cfg := opt.Sketch
	cfg.Columns = cols
	cfg.ExpectedRows = 1 << 60 // a feed rate of ~0: rows pass the moments, coreset and sample only
	pr, err := kgauge.ProbeFromRows(rows, cols, opt)
	if err != nil {
		return err
	}
	base, err := sketch.New(cfg, pr)
	if err != nil {
		return err
	}
	feedN := min(n, probeFeedRows)
	t0 := time.Now()
	base.Add(rows[:feedN*d])
	fresh := time.Since(t0).Seconds()
	// Steady state: keep adding until the sketch has seen several times its capacity and enough time
	// has been measured.
	warm := int64(4 * (cfg.CoresetSize + cfg.SampleSize))
	for base.Rows() < warm {
		base.Add(rows)
	}
	// The pass hands sketch.AddColumns the decoded columns (readUnit), so that is what is timed: the
	// rows are turned into columns a chunk at a time outside the clock (sketch.Add's own transpose
	// had made up a third of its cost).
	chunk := min(n, addColumnRows)
	colBuf := make([]float64, chunk*d)
	colViews := make([][]float64, d)
	var per []float64
	for range addRuns {
		var added int64
		var spent float64
		for added < int64(n) || spent < probeMinTiming {
			for start := 0; start < n; start += chunk {
				m := min(chunk, n-start)
				for j := range colViews {
					colViews[j] = colBuf[j*chunk : j*chunk+m]
				}
				for i := range m {
					for j, v := range rows[(start+i)*d : (start+i+1)*d] {
						colViews[j][i] = v
					}
				}
				t0 = time.Now()
				base.AddColumns(colViews)
				spent += time.Since(t0).Seconds()
			}
			added += int64(n)
		}
		per = append(per, spent/float64(added*int64(d)))
	}
	slices.Sort(per)
	if v := per[len(per)/2]; v > 0 {
		cal.AddSecPerValue = v
	}
	fcfg := cfg
	fcfg.MiniBatchRows = int64(feedN)
	fcfg.ExpectedRows = int64(feedN) // rate 1: every row is fed
	feed, err := sketch.New(fcfg, pr)
	if err != nil {
		return err
	}
	t0 = time.Now()
	feed.Add(rows[:feedN*d])
	fed := time.Since(t0).Seconds()
	sumK := float64(cfg.MaxK+cfg.MinK) * float64(cfg.MaxK-cfg.MinK+1) / 2
	if fed > fresh {
		cal.KernelPKDPerSec = float64(feedN) * sumK * float64(d) / (fed - fresh)
	}
	return nil
}

// addRuns is the number of timed repetitions of the probe's steady-state sketch.AddColumns
// measurement, and addColumnRows the rows handed to it at a time.
const (
	addRuns       = 3
	addColumnRows = 4096
)

// probeRuns returns the probe's criteria runs, the most expensive first (the order they start in):
// without the Ward linkage the largest k, the middle of the range from the smallest k >= 2 and that
// smallest k; k = 1 with the Ward linkage; and k = 1 without it.
func probeRuns(minK, maxK int) []cost.CriteriaRun {
	lo := max(minK, 2)
	var runs []cost.CriteriaRun
	if maxK > lo {
		runs = append(runs, cost.CriteriaRun{K: maxK})
		if mid := (lo + maxK) / 2; mid > lo {
			runs = append(runs, cost.CriteriaRun{K: mid})
		}
	}
	if maxK >= lo {
		runs = append(runs, cost.CriteriaRun{K: lo})
	}
	return append(runs, cost.CriteriaRun{K: 1, Ward: true}, cost.CriteriaRun{K: 1})
}

// runCriteria times the criteria at the estimate's option sizes on a sketch of rows (of the
// estimate's coreset and sample sizes as far as the rows go; cost.CriteriaFromRuns scales a
// smaller coreset up), for the runs given (probeRuns, for a plan): one criteria.Evaluate per run
// on one worker, as many side by side as the estimate's criteria run (one per CPU), without the
// Ward linkage but in one run, and returns them in ascending k for cost.CriteriaFromRuns, with the
// width the criteria ran in (after a wide input's reduction).
func runCriteria(ctx context.Context, rows []float64, cols []string, opt kgauge.Options, runs []cost.CriteriaRun) (*cost.CriteriaProbe, error) {
	sk, err := probeSketch(rows, cols, opt)
	if err != nil {
		return nil, err
	}
	sum, _ := kgauge.Summarize(sk, opt.Scale)
	sum, _ = kgauge.ReduceWide(sum, opt) // the criteria run where Evaluate runs them
	par := opt.Criteria.Workers
	if par == 0 {
		par = runtime.GOMAXPROCS(0)
	}
	par = min(par, len(runs))
	errs := make([]error, len(runs))
	next := make(chan int)
	var wg sync.WaitGroup
	for range par {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				r := &runs[i]
				co := opt.Criteria
				co.MinK, co.MaxK, co.Workers, co.SkipWard = r.K, r.K, 1, !r.Ward
				t0 := time.Now()
				res, err := criteria.Evaluate(ctx, sum, co)
				r.Seconds = time.Since(t0).Seconds()
				if err != nil {
					errs[i] = err
					continue
				}
				r.Leaves = res.Ward.Leaves
			}
		}()
	}
	for i := range runs {
		next <- i
	}
	close(next)
	wg.Wait()
	if err := errors.Join(errs...); err != nil {
		return nil, fmt.Errorf("plan: probe criteria run: %w", err)
	}
	slices.SortStableFunc(runs, func(a, b cost.CriteriaRun) int { return a.K - b.K })
	return &cost.CriteriaProbe{Dims: sum.D, Coreset: sum.Coreset.Len(), Parallel: par, Runs: runs}, nil
}

// Project fills r.Throughput from its pass and r.Projection with the model's prediction for 1, 10
// and 100 times its input, after fitting the committed constants to the stages this run measured
// (so the 1× row reproduces the run, and the others extrapolate it). w describes the run's input
// (PlanWorkload); a result made from saved sketches only, with no pass, gets neither.
func Project(r *kgauge.Result, w cost.Workload) {
	if r == nil || r.Timings.Pass <= 0 || w.Dims == 0 {
		return
	}
	r.Throughput = &kgauge.Throughput{Workers: w.Workers, PassSeconds: r.Timings.Pass,
		RowsPerSecond:  float64(r.Rows+r.SkippedRows) / r.Timings.Pass,
		BytesPerSecond: float64(w.Bytes) / r.Timings.Pass, Bytes: w.Bytes}
	cal := FitToRun(cost.Default(), w, r.Timings)
	r.Projection = cost.ScaleTable(w, cal, PlanScales...)
}

// FitToRun rescales the constants of cal so that the model reproduces the measured stage times tm
// of a run of w: the open and criteria terms by their ratios, the probe overhead so that the probe
// term matches, and the scan and sketch rates so that the whole pass matches; when the unit opens and
// the fixed feed term alone come near the measured pass, both pass overheads take the whole ratio
// instead.
func FitToRun(cal cost.Calibration, w cost.Workload, tm kgauge.Timings) cost.Calibration {
	p := cost.Predict(w, cal)
	t := p.Terms
	if tm.Open > 0 && t.Open > 0 && w.Files > 0 {
		cal.OpenFileSeconds *= tm.Open / t.Open
	}
	if tm.Criteria > 0 && t.Criteria > 0 {
		// Every calibrated criteria run and whole stage takes f times as long, and so does the stage
		// priced from them.
		f := tm.Criteria / t.Criteria
		sets := make([]cost.CriteriaProbe, len(cal.Criteria))
		for i, cp := range cal.Criteria {
			cp.Runs = slices.Clone(cp.Runs)
			for j := range cp.Runs {
				cp.Runs[j].Seconds *= f
			}
			cp.Stages = slices.Clone(cp.Stages)
			for j := range cp.Stages {
				cp.Stages[j].Seconds *= f
			}
			sets[i] = cp
		}
		cal.Criteria = sets
	}
	if tm.Pass > 0 && t.Pass > 0 {
		// The unit opens keep their price (the probe stage pays them too); the bytes and the sketch
		// take the rest of the rows-proportional part.
		opens := float64(w.Units) * cal.OpenUnitSeconds * cost.Overhead(cal.PassOverhead)
		linear := t.Scan + t.Sketch - opens
		want := tm.Pass*t.Speedup - t.Feed - opens
		if linear > 0 && want > 0.1*linear {
			f := want / linear
			cal.ScanBytesPerSec /= f
			cal.AddSecPerValue *= f
		} else {
			f := tm.Pass / t.Pass
			cal.PassOverhead = cost.Overhead(cal.PassOverhead) * f
			cal.FeedOverhead = cost.Overhead(cal.FeedOverhead) * f
		}
	}
	// The probe shares the unit-open, scan and kernel rates just refitted: fit it last. Its term is
	// affine in the overhead (unit opens outside it), so the overhead is solved from two prices.
	if tm.Probe > 0 {
		cal.ProbeOverhead = 1
		one := cost.Predict(w, cal).Terms.Probe
		cal.ProbeOverhead = 2
		scaled := cost.Predict(w, cal).Terms.Probe - one // the part under the overhead
		cal.ProbeOverhead = 1
		if opens := one - scaled; scaled > 0 && tm.Probe > opens {
			cal.ProbeOverhead = (tm.Probe - opens) / scaled
		}
	}
	cal.Source = "fitted to this run; " + cal.Source
	cal.Probe = nil
	return cal
}
