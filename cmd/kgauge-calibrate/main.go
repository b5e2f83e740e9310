// Command kgauge-calibrate measures the constants of the cost model (package cost) on this machine and
// checks its predictions.
//
//	go run ./cmd/kgauge-calibrate                      # rewrite cost/calibration.json
//	go run ./cmd/kgauge-calibrate --accuracy           # rewrite bench/plan-accuracy.md
//
// Both generate Gaussian-mixture Parquet files with bench/synth.WriteMixture in a temporary
// directory, which is deleted afterwards; nothing large is ever written into the repository. Every
// estimate runs in a child process (this binary re-executed), so that its peak resident memory is
// its own.
package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"syscall"
	"time"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/capacity"
	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/internal/atomicfile"
)

const childFlag = "-child-run"

func main() {
	if len(os.Args) > 1 && os.Args[1] == childFlag {
		if err := child(os.Args[2:]); err != nil {
			fmt.Fprintln(os.Stderr, "kgauge-calibrate child:", err)
			os.Exit(1)
		}
		return
	}
	if err := run(os.Args[1:]); err != nil {
		fmt.Fprintln(os.Stderr, "kgauge-calibrate:", err)
		os.Exit(1)
	}
}

// childOut is what a child run reports on stdout.
type childOut struct {
	Plan     *capacity.Plan `json:"plan,omitempty"`
	Timings  kgauge.Timings `json:"timings"`
	Seconds  float64        `json:"seconds"` // wall time of the estimate (or plan)
	Rows     int64          `json:"rows"`
	K        int            `json:"k"`
	MaxRSS   int64          `json:"max_rss_bytes"`
	Workload cost.Workload  `json:"workload"`
}

// child runs "plan MAXK FILE", "plan-noprobe MAXK FILE" (the figures priced from the committed
// calibration alone: the progress bar's first ETA, the report's planned column, --memory's check)
// or "estimate WORKERS MAXK FILE" (MAXK 0: the default k range) and prints a childOut.
func child(args []string) error {
	if len(args) < 3 || (args[0] == "estimate" && len(args) < 4) {
		return errors.New("child: want plan MAXK FILE or estimate WORKERS MAXK FILE")
	}
	ctx := context.Background()
	opt := kgauge.DefaultOptions()
	var out childOut
	switch args[0] {
	case "plan", "plan-noprobe":
		if _, err := fmt.Sscan(args[1], &opt.Criteria.MaxK); err != nil {
			return fmt.Errorf("child: bad max-k %q", args[1])
		}
		start := time.Now()
		p, err := capacity.Forecast(ctx, args[2:], opt, args[0] == "plan")
		if err != nil {
			return err
		}
		out.Seconds = time.Since(start).Seconds()
		out.Plan = p
	case "estimate":
		if _, err := fmt.Sscan(args[1], &opt.Workers); err != nil {
			return fmt.Errorf("child: bad workers %q", args[1])
		}
		if _, err := fmt.Sscan(args[2], &opt.Criteria.MaxK); err != nil {
			return fmt.Errorf("child: bad max-k %q", args[2])
		}
		w, err := kgauge.PlanWorkload(args[3:], opt)
		if err != nil {
			return err
		}
		start := time.Now()
		res, _, err := kgauge.Estimate(ctx, args[3:], opt)
		if err != nil {
			return err
		}
		out.Seconds = time.Since(start).Seconds()
		out.Timings, out.Rows, out.K, out.Workload = res.Timings, res.Rows, res.K, w
	default:
		return fmt.Errorf("child: unknown mode %q", args[0])
	}
	out.MaxRSS = ownPeak()
	return json.NewEncoder(os.Stdout).Encode(out)
}

// ownPeak returns this process's peak resident memory (VmHWM in /proc/self/status), or 0 where
// there is none. getrusage's ru_maxrss would not do: Linux carries the high-water mark of the
// address space a child was forked from across exec, so a child of a parent that has just written
// a 2.6 GB file reports the parent's peak.
func ownPeak() int64 {
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return 0
	}
	for _, line := range strings.Split(string(b), "\n") {
		if v, ok := strings.CutPrefix(line, "VmHWM:"); ok {
			var kb int64
			if _, err := fmt.Sscan(strings.TrimSuffix(strings.TrimSpace(v), " kB"), &kb); err == nil {
				return kb * 1024
			}
		}
	}
	return 0
}

// runChild re-executes this binary in child mode; the child reports its own peak resident memory,
// and getrusage's is the fallback where it cannot.
func runChild(args ...string) (childOut, error) {
	var out childOut
	self, err := os.Executable()
	if err != nil {
		return out, err
	}
	cmd := exec.Command(self, append([]string{childFlag}, args...)...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		return out, fmt.Errorf("%s: %v: %s", strings.Join(args, " "), err, strings.TrimSpace(stderr.String()))
	}
	if err := json.Unmarshal(stdout.Bytes(), &out); err != nil {
		return out, fmt.Errorf("%s: %w", strings.Join(args, " "), err)
	}
	if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok && out.MaxRSS == 0 {
		out.MaxRSS = ru.Maxrss * 1024 // kilobytes on Linux
	}
	return out, nil
}

// shape is one generated input.
type shape struct {
	Name     string
	Rows     int
	Dims     int
	K        int
	RowGroup int
	Comp     synth.Compression
	MaxK     int // the estimate's --max-k; 0 is the default
}

func (s shape) write(dir string) (string, error) {
	o := synth.DefaultMixtureOptions()
	o.Rows, o.Dims, o.K, o.RowGroup, o.Compression, o.Seed = s.Rows, s.Dims, s.K, s.RowGroup, s.Comp, 7
	path := filepath.Join(dir, s.Name+".parquet")
	if err := synth.WriteMixture(path, o); err != nil {
		return "", err
	}
	return path, nil
}

func run(args []string) error {
	fs := flag.NewFlagSet("kgauge-calibrate", flag.ContinueOnError)
	accuracy := fs.Bool("accuracy", false, "check predictions against measurements instead of calibrating")
	out := fs.String("out", "", "output file (default cost/calibration.json, or bench/plan-accuracy.md with --accuracy)")
	repeats := fs.Int("repeats", 3, "runs per measurement; the median is kept")
	quick := fs.Bool("quick", false, "small files only (a smoke run; do not commit its output)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *repeats < 1 {
		return fmt.Errorf("--repeats must be at least 1, got %d", *repeats)
	}
	dir, err := os.MkdirTemp("", "kgauge-calibrate-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(dir)
	if *accuracy {
		if *out == "" {
			*out = "bench/plan-accuracy.md"
		}
		return checkAccuracy(dir, *out, *repeats, *quick)
	}
	if *out == "" {
		*out = "cost/calibration.json"
	}
	return calibrate(dir, *out, *repeats, *quick)
}

func median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// machine describes this machine for the records.
func machine() string {
	cpu := "unknown CPU"
	if b, err := os.ReadFile("/proc/cpuinfo"); err == nil {
		for _, line := range strings.Split(string(b), "\n") {
			if strings.HasPrefix(line, "model name") {
				if i := strings.Index(line, ":"); i >= 0 {
					cpu = strings.TrimSpace(line[i+1:])
				}
				break
			}
		}
	}
	return fmt.Sprintf("%d CPUs (%s), %s/%s, %s", runtime.NumCPU(), cpu, runtime.GOOS, runtime.GOARCH, runtime.Version())
}

func loadAverage() string {
	b, err := os.ReadFile("/proc/loadavg")
	if err != nil {
		return "unknown"
	}
	f := strings.Fields(string(b))
	if len(f) < 3 {
		return "unknown"
	}
	return strings.Join(f[:3], " ")
}

// calibrate measures the constants on one generated file and writes calibration.json.
func calibrate(dir, out string, repeats int, quick bool) error {
	sh := shape{Name: "calibrate", Rows: 2_000_000, Dims: 16, K: 10, RowGroup: 65536}
	if quick {
		sh.Rows = 200_000
		sh.RowGroup = 8192
	}
	fmt.Fprintf(os.Stderr, "calibrate: writing %d × %d rows\n", sh.Rows, sh.Dims)
	path, err := sh.write(dir)
	if err != nil {
		return err
	}
	var probes []cost.Calibration
	for range repeats {
		c, err := runChild("plan", "0", path)
		if err != nil {
			return err
		}
		probes = append(probes, c.Plan.Calibration)
	}
	cal := cost.Default()
	pick := func(f func(cost.Calibration) float64) float64 {
		v := make([]float64, len(probes))
		for i, c := range probes {
			v[i] = f(c)
		}
		return median(v)
	}
	cal.ScanBytesPerSec = pick(func(c cost.Calibration) float64 { return c.ScanBytesPerSec })
	cal.OpenUnitSeconds = pick(func(c cost.Calibration) float64 { return c.OpenUnitSeconds })
	cal.AddSecPerValue = pick(func(c cost.Calibration) float64 { return c.AddSecPerValue })
	cal.KernelPKDPerSec = pick(func(c cost.Calibration) float64 { return c.KernelPKDPerSec })
	cal.Cores = runtime.NumCPU()
	cal.PassOverhead, cal.ProbeOverhead, cal.CriteriaScaleUp, cal.CriteriaFixed = 1, 1, 0, 0

	var pass1, pass2, crit, open, probe, rss []float64
	var work cost.Workload
	for _, workers := range []int{1, 2} {
		for range repeats {
			fmt.Fprintf(os.Stderr, "calibrate: estimate with %d worker(s)\n", workers)
			c, err := runChild("estimate", fmt.Sprint(workers), "0", path)
			if err != nil {
				return err
			}
			if workers == 1 {
				pass1 = append(pass1, c.Timings.Pass)
			} else {
				pass2 = append(pass2, c.Timings.Pass)
				rss = append(rss, float64(c.MaxRSS))
				work = c.Workload
			}
			crit = append(crit, c.Timings.Criteria)
			open = append(open, c.Timings.Open)
			probe = append(probe, c.Timings.Probe)
		}
	}
	// Amdahl with n = 2: t2/t1 = (1−p) + p/2.
	if n := min(2, cal.Cores); n > 1 {
		s := median(pass1) / median(pass2)
		cal.ParallelFraction = math.Max(0, math.Min(1, (1-1/s)*float64(n)/float64(n-1)))
	} else {
		cal.ParallelFraction = 0
	}
	w1 := work
	w1.Workers = 1
	pred := cost.Predict(w1, cal)
	linear := pred.Terms.Scan + pred.Terms.Sketch + pred.Terms.Feed
	if linear > 0 {
		cal.PassOverhead = median(pass1) / linear
	}
	// Without a probe, the criteria are priced from work units at the rate of the estimates' own
	// criteria stage (a plan's probe prices them from its own criteria runs instead, with no constant).
	cw := cost.CriteriaWork(work.Coreset, work.MinK, work.MaxK, work.Dims, work.Restarts, work.GapRefs,
		min(work.GapSample, work.Sample), work.GapRestarts, work.Anchors)
	cal.CriteriaWorkPerSec = cw / median(crit)
	cal.OpenFileSeconds = median(open)
	pred = cost.Predict(work, cal)
	if pred.Terms.Probe > 0 {
		cal.ProbeOverhead = median(probe) / pred.Terms.Probe
	}
	cal.BaseBytes = max(0, int64(median(rss))-(pred.PeakBytes-cal.BaseBytes))
	cal.Source = fmt.Sprintf("kgauge-calibrate on %d × %d Gaussian-mixture rows (snappy Parquet, %d-row groups), medians of %d runs, load average %s",
		sh.Rows, sh.Dims, sh.RowGroup, repeats, loadAverage())
	cal.Machine = machine()
	cal.Command = "go run ./cmd/kgauge-calibrate"
	cal.Probe = nil
	if err := cal.Validate(); err != nil {
		return err
	}
	b, err := cal.JSON()
	if err != nil {
		return err
	}
	if err := atomicfile.Write(out, 0o644, func(w io.Writer) error { _, err := w.Write(b); return err }); err != nil {
		return err
	}
	fmt.Fprintf(os.Stderr, "calibrate: wrote %s\n", out)
	return nil
}

// accuracyRow is one prediction beside its measurement.
type accuracyRow struct {
	Shape              shape
	FileBytes          int64
	ProbeRows          int64
	Ratio              float64 // file rows ÷ rows the plan's probe read
	Predicted          float64
	Measured           float64
	Err                float64
	NoProbe            float64 // the prediction without the timed probe (committed calibration)
	NoProbeErr         float64
	PredPeak, MeasPeak int64
	PlanSeconds        float64
	Terms              cost.Terms
	Timings            kgauge.Timings
}

func checkAccuracy(dir, out string, repeats int, quick bool) error {
	shapes := []shape{
		{Name: "m1-d16", Rows: 1_000_000, Dims: 16, K: 10, RowGroup: 16384},
		{Name: "m5-d16", Rows: 5_000_000, Dims: 16, K: 10, RowGroup: 65536},
		{Name: "m20-d16", Rows: 20_000_000, Dims: 16, K: 10, RowGroup: 65536},
		{Name: "m4-d8-zstd", Rows: 4_000_000, Dims: 8, K: 5, RowGroup: 65536, Comp: synth.Zstd},
		{Name: "m2-d32", Rows: 2_000_000, Dims: 32, K: 12, RowGroup: 32768},
		{Name: "m1-d64", Rows: 1_000_000, Dims: 64, K: 16, RowGroup: 16384},
		{Name: "m2-d16-k10", Rows: 2_000_000, Dims: 16, K: 10, RowGroup: 65536, MaxK: 10},
		{Name: "m2-d16-k40", Rows: 2_000_000, Dims: 16, K: 10, RowGroup: 65536, MaxK: 40},
	}
	if quick {
		shapes = []shape{{Name: "q-d16", Rows: 300_000, Dims: 16, K: 6, RowGroup: 8192},
			{Name: "q-d16-k8", Rows: 300_000, Dims: 16, K: 6, RowGroup: 8192, MaxK: 8}}
	}
	start := loadAverage()
	var rows []accuracyRow
	for _, sh := range shapes {
		fmt.Fprintf(os.Stderr, "accuracy: writing %s\n", sh.Name)
		path, err := sh.write(dir)
		if err != nil {
			return err
		}
		st, err := os.Stat(path)
		if err != nil {
			return err
		}
		maxK := fmt.Sprint(sh.MaxK)
		p, err := runChild("plan", maxK, path)
		if err != nil {
			return err
		}
		np, err := runChild("plan-noprobe", maxK, path)
		if err != nil {
			return err
		}
		var secs []float64
		var peaks []float64
		var last childOut
		for range repeats {
			fmt.Fprintf(os.Stderr, "accuracy: estimate %s\n", sh.Name)
			c, err := runChild("estimate", fmt.Sprint(runtime.NumCPU()), maxK, path)
			if err != nil {
				return err
			}
			secs = append(secs, c.Seconds)
			peaks = append(peaks, float64(c.MaxRSS))
			last = c
		}
		os.Remove(path)
		r := accuracyRow{Shape: sh, FileBytes: st.Size(), Predicted: p.Plan.Seconds, Measured: median(secs),
			PredPeak: p.Plan.PeakBytes, MeasPeak: int64(median(peaks)), PlanSeconds: p.Seconds,
			Terms: p.Plan.Terms, Timings: last.Timings}
		if pt := p.Plan.Calibration.Probe; pt != nil {
			r.ProbeRows = pt.Rows
			r.Ratio = float64(sh.Rows) / float64(pt.Rows)
		}
		r.Err = r.Predicted/r.Measured - 1
		r.NoProbe = np.Plan.Seconds
		r.NoProbeErr = r.NoProbe/r.Measured - 1
		rows = append(rows, r)
	}
	return writeAccuracy(out, rows, repeats, start, quick)
}

func writeAccuracy(out string, rows []accuracyRow, repeats int, loadBefore string, quick bool) error {
	var b strings.Builder
	fmt.Fprintf(&b, "# Plan accuracy: predicted against measured\n\n")
	fmt.Fprintf(&b, "Written by `go run ./cmd/kgauge-calibrate --accuracy` (%s). Machine: %s. Load average before: %s, after: %s.\n\n",
		time.Now().UTC().Format("2006-01-02"), machine(), loadBefore, loadAverage())
	if quick {
		b.WriteString("**Quick smoke run (--quick): small files, not a record.**\n\n")
	}
	fmt.Fprintf(&b, "Each input is a Gaussian mixture written by `bench/synth.WriteMixture` (snappy Parquet unless noted, PLAIN encoding, 1 MiB pages) into a temporary directory and deleted after its runs. "+
		"`kgauge plan` (default flags but the `--max-k` noted, timed probe) runs once in its own process; the estimate then runs %d times in fresh processes with the same flags and %d workers, and the median wall time of `Estimate` (open to verdict) and the median peak resident memory (VmHWM, read by each child itself) are kept. "+
		"*ratio* is the file's rows over the rows the plan's probe read (the issue asks for at least 20). *no-probe s* is `plan --no-probe`, priced from the committed calibration alone: the same figure as the progress bar's first ETA and the report's planned column. The target is ±25%% on time for both.\n\n", repeats, runtime.NumCPU())
	b.WriteString("| input | rows × cols | file | probe rows | ratio | predicted s | measured s | error | no-probe s | error | predicted peak | measured peak | plan took |\n")
	b.WriteString("|---|---|---|---|---|---|---|---|---|---|---|---|---|\n")
	worst := 0.0
	for _, r := range rows {
		comp := "snappy"
		if r.Shape.Comp == synth.Zstd {
			comp = "zstd"
		}
		opts := ""
		if r.Shape.MaxK > 0 {
			opts = fmt.Sprintf(", --max-k %d", r.Shape.MaxK)
		}
		fmt.Fprintf(&b, "| %s (k=%d, %s, %d-row groups%s) | %d × %d | %.2f GB | %d | %.0f | %.1f | %.1f | %+.0f%% | %.1f | %+.0f%% | %.0f MiB | %.0f MiB | %.1f s |\n",
			r.Shape.Name, r.Shape.K, comp, r.Shape.RowGroup, opts, r.Shape.Rows, r.Shape.Dims, float64(r.FileBytes)/1e9, r.ProbeRows, r.Ratio,
			r.Predicted, r.Measured, 100*r.Err, r.NoProbe, 100*r.NoProbeErr, float64(r.PredPeak)/(1<<20), float64(r.MeasPeak)/(1<<20), r.PlanSeconds)
		worst = math.Max(worst, math.Max(math.Abs(r.Err), math.Abs(r.NoProbeErr)))
	}
	b.WriteString("\nPer stage (predicted / measured seconds, last run):\n\n")
	b.WriteString("| input | open | probe | pass | criteria | criteria error |\n|---|---|---|---|---|---|\n")
	for _, r := range rows {
		fmt.Fprintf(&b, "| %s | %.3f / %.3f | %.2f / %.2f | %.1f / %.1f | %.1f / %.1f | %+.0f%% |\n", r.Shape.Name,
			r.Terms.Open, r.Timings.Open, r.Terms.Probe, r.Timings.Probe, r.Terms.Pass, r.Timings.Pass, r.Terms.Criteria, r.Timings.Criteria,
			100*(r.Terms.Criteria/r.Timings.Criteria-1))
	}
	verdict := "within"
	if worst > 0.25 {
		verdict = "**outside**"
	}
	fmt.Fprintf(&b, "\nLargest time error (with or without the probe): %.0f%%, %s the ±25%% target.\n", 100*worst, verdict)
	b.WriteString("\nThe criteria term is priced from the plan's criteria runs: the criteria at the estimate's option sizes on a sketch of the probe rows, for k = 1 (with and without the Ward linkage), the smallest k ≥ 2, the middle and the largest k of the range, one per CPU side by side, interpolated over the other k (bench/cost.CriteriaFromRuns).\n")
	b.WriteString("\nThese machines are shared: another session's load changes both the probe's rates and the run it predicts, and not always equally. Memory is predicted from the sizes the options fix plus a baseline measured by `kgauge-calibrate`; it is a planning figure, not a bound.\n")
	return atomicfile.Write(out, 0o644, func(w io.Writer) error { _, err := io.WriteString(w, b.String()); return err })
}
