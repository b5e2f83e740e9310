package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/capacity"
	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/internal/atomicfile"
	"github.com/kgauge/kgauge/internal/cliflags"
	htmlreport "github.com/kgauge/kgauge/report"
)

// EstimateCommand runs "kgauge estimate".
type EstimateCommand struct {
	Stdout, Stderr io.Writer
}

// estimateFlags binds the flags of estimate, shared by plan, track and demo: the data flags of
// cliflags plus the workers and the outputs.
type estimateFlags struct {
	cliflags.Data
	asJSON     bool
	quiet      bool
	wide       bool
	out        string
	saveSketch string
	report     string
}

func (f *estimateFlags) register(fs *flag.FlagSet) {
	f.Data.Register(fs)
	fs.IntVar(&f.Opt.Workers, "workers", f.Opt.Workers, "goroutines reading and sketching")
	fs.BoolVar(&f.Opt.SkipUnreadable, "skip-unreadable", false, "skip data files that cannot be read (listed in skipped_files) instead of failing")
	fs.BoolVar(&f.asJSON, "json", false, "print one JSON document instead of the table")
	fs.BoolVar(&f.quiet, "quiet", false, "no progress bar")
}

// Output flags a command may take besides the data flags; each command registers only those it
// uses, so that its --help lists exactly the flags it accepts.
const (
	withOut = 1 << iota
	withSaveSketch
	withReport
	withWide // --wide: the table with intervals (estimate and demo print the table)
)

func (f *estimateFlags) registerOutputs(fs *flag.FlagSet, which int) {
	if which&withOut != 0 {
		fs.StringVar(&f.out, "out", "", "also write the JSON result to this file (atomically)")
	}
	if which&withSaveSketch != 0 {
		fs.StringVar(&f.saveSketch, "save-sketch", "", "write the merged sketch to this file (atomically)")
	}
	if which&withWide != 0 {
		fs.BoolVar(&f.wide, "wide", false, "the per-k table with the silhouette's 95% interval and the gap's s_k (wider than 120 columns)")
	}
	if which&withReport != 0 {
		fs.StringVar(&f.report, "report", "", "also write a self-contained HTML report with plots to this file (atomically)")
	}
}

// options returns the bound options after checking the flag values.
func (f *estimateFlags) options() (kgauge.Options, error) {
	if f.Opt.Workers < 1 {
		return f.Opt, usageErrorf("--workers must be at least 1, got %d", f.Opt.Workers)
	}
	o, err := f.Data.Options()
	if err != nil {
		return o, &usageError{msg: err.Error()}
	}
	return o, nil
}

// Run parses args and runs the estimate.
func (c *EstimateCommand) Run(ctx context.Context, args []string) error {
	fs := flag.NewFlagSet("estimate", flag.ContinueOnError)
	var f estimateFlags
	f.register(fs)
	f.registerOutputs(fs, withOut|withSaveSketch|withReport|withWide)
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "Usage: kgauge estimate [flags] PATH...\n\nScore every k in range from one pass over PATH and give a verdict.\n\nFlags:")
		printFlags(fs)
	}
	if err := parseArgs(fs, args, c.Stdout); err != nil {
		return err
	}
	if fs.NArg() == 0 {
		return usageErrorf("estimate: no PATH given")
	}
	opt, err := f.options()
	if err != nil {
		return err
	}
	res, err := runEstimate(ctx, fs.Args(), opt, &f, c.Stderr)
	if res == nil {
		return err
	}
	// The outputs are independent: the result is printed even when a file could not be written,
	// and err then names every output that failed (exit code 4).
	if perr := printResult(c.Stdout, res, f.asJSON, f.wide); perr != nil && err == nil {
		err = perr
	}
	return err
}

// runEstimate runs the estimate with a progress bar when stderr is a terminal, then writes the
// requested files. The outputs are checked against the inputs before anything is read: an output
// that is an input's file, or two outputs that are one file, is a usage error. After the estimate,
// each output is written on its own: a failure to write one leaves the others written, and the
// result is returned together with an *outputError naming each failed output.
func runEstimate(ctx context.Context, paths []string, opt kgauge.Options, f *estimateFlags, stderr io.Writer) (*kgauge.Result, error) {
	outs := []kgauge.Output{{Flag: "--out", Path: f.out}, {Flag: "--save-sketch", Path: f.saveSketch}, {Flag: "--report", Path: f.report}}
	for _, o := range outs {
		if o.Path != "" {
			if err := checkOutputDir(o.Path); err != nil {
				return nil, err
			}
		}
	}
	if err := kgauge.CheckOutputs(paths, outs); err != nil {
		return nil, &usageError{msg: err.Error()}
	}
	// The model prices the run from the footers before it starts: the bar's first ETA, the
	// projection to 10× and 100× the input, and the report's plan section.
	work, plan := planFor(paths, opt)
	var stopBar func()
	if !f.quiet && isTerminal(stderr) {
		opt.Progress = new(kgauge.Progress)
		var terms cost.Terms
		if plan != nil {
			terms = plan.Terms
		}
		stopBar = showProgress(opt.Progress, stderr, terms)
	}
	opt.AfterPass = releasePassMemory
	res, sk, err := kgauge.Estimate(ctx, paths, opt)
	if stopBar != nil {
		stopBar()
	}
	if err != nil {
		return nil, err
	}
	capacity.Project(res, work)
	var failed []error
	if f.report != "" {
		if err := htmlreport.Write(f.report, res, plan); err != nil {
			failed = append(failed, fmt.Errorf("--report: %w", err))
		}
	}
	if f.saveSketch != "" {
		if err := atomicfile.Write(f.saveSketch, 0o644, sk.Encode); err != nil {
			failed = append(failed, fmt.Errorf("--save-sketch: %w", err))
		}
	}
	if f.out != "" {
		if err := atomicfile.Write(f.out, 0o644, func(w io.Writer) error { return writeJSON(w, res) }); err != nil {
			failed = append(failed, fmt.Errorf("--out: %w", err))
		}
	}
	if len(failed) > 0 {
		return res, &outputError{outputsFailed(failed)}
	}
	return res, nil
}

// outputsFailed joins the failures to write outputs into one line.
func outputsFailed(errs []error) error {
	msgs := make([]string, len(errs))
	for i, e := range errs {
		msgs[i] = e.Error()
	}
	return fmt.Errorf("%d output(s) not written, the others were: %s", len(errs), strings.Join(msgs, "; "))
}

// checkOutputDir fails early, before any reading, when an output's directory does not exist.
func checkOutputDir(path string) error {
	dir := filepath.Dir(path)
	st, err := os.Stat(dir)
	if err != nil {
		return &outputError{fmt.Errorf("output %s: directory %s does not exist", path, dir)}
	}
	if !st.IsDir() {
		return &outputError{fmt.Errorf("output %s: %s is not a directory", path, dir)}
	}
	return nil
}

func isTerminal(w io.Writer) bool {
	f, ok := w.(interface{ Fd() uintptr })
	return ok && f.Fd() != ^uintptr(0) && term.IsTerminal(int(f.Fd()))
}

// showProgress draws the run's progress on w until the returned function is called: while the
// files are probed and read, a bar of rows read with the bytes, the rate and the time left; while
// k is scored, a bar of the criteria stage's share of work done. The time left starts from the
// model's predicted terms (zero when unknown) and moves to what is measured as a stage advances.
func showProgress(p *kgauge.Progress, w io.Writer, pred cost.Terms) func() {
	done := make(chan struct{})
	finished := make(chan struct{})
	start := time.Now()
	go func() {
		defer close(finished)
		var bar *progressbar.ProgressBar
		scoring := false
		lastStage, stageStart := kgauge.Stage(""), time.Now()
		tick := time.NewTicker(150 * time.Millisecond)
		defer tick.Stop()
		for {
			select {
			case <-done:
				if bar != nil {
					bar.Finish()
				}
				return
			case <-tick.C:
			}
			total := p.TotalRows.Load()
			stage := p.Stage()
			if stage != lastStage {
				lastStage, stageStart = stage, time.Now()
			}
			if stage == kgauge.StageCriteria && !scoring {
				// The rows are all read: the bar now counts the criteria's work.
				if bar != nil {
					bar.Finish()
				}
				scoring = true
				bar = progressbar.NewOptions64(1000,
					progressbar.OptionSetWriter(w),
					progressbar.OptionSetDescription("scoring k"),
					progressbar.OptionThrottle(100*time.Millisecond),
					progressbar.OptionClearOnFinish(),
					progressbar.OptionSetPredictTime(false))
			}
			if bar == nil && total > 0 {
				bar = progressbar.NewOptions64(total,
					progressbar.OptionSetWriter(w),
					progressbar.OptionSetDescription("opening"),
					progressbar.OptionShowCount(),
					progressbar.OptionShowIts(),
					progressbar.OptionSetItsString("rows"),
					progressbar.OptionThrottle(100*time.Millisecond),
					progressbar.OptionClearOnFinish(),
					progressbar.OptionSetPredictTime(false))
			}
			if bar == nil {
				continue
			}
			now := progressNow{stage: stage, elapsed: time.Since(start).Seconds(), inStage: time.Since(stageStart).Seconds(),
				rows: p.Rows.Load(), total: total, scored: p.CriteriaShare()}
			var label string
			switch {
			case scoring:
				bar.Set64(int64(1000 * now.scored))
				label = "scoring k"
			case stage == kgauge.StagePass:
				bar.Set64(now.rows)
				label = "reading"
				if b := p.Bytes.Load(); b > 0 && now.inStage > 0 {
					label += fmt.Sprintf(" %s at %s/s", bytesText(b), bytesText(int64(float64(b)/now.inStage)))
				}
			case stage == kgauge.StageProbe:
				label = "probing the first rows"
			default:
				label = "opening"
			}
			if eta := progressETA(pred, now); eta >= 0 {
				label += fmt.Sprintf(" · about %s left", secondsText(eta))
			}
			bar.Describe(label)
		}
	}()
	return func() {
		close(done)
		<-finished
	}
}

// progressNow is what the progress bar knows at one moment of a run.
type progressNow struct {
	stage            kgauge.Stage
	elapsed, inStage float64 // seconds since the run and the stage started
	rows, total      int64   // rows read by the pass, rows expected
	scored           float64 // share of the criteria stage's work done
}

// progressETA is the remaining seconds of the run, or -1 when nothing is known. Before the pass it is
// the model's prediction less the time elapsed. Within the pass and the criteria stage, at a share
// f of the stage's work done, the stage's remaining time is (1−f)·(model's remaining) + f·(measured
// pace's remaining), so the model leads at the start and the measurement at the end; the model's
// criteria time follows the pass. When the model's time for a stage is used up and nothing is
// measured yet, the time left is unknown (-1), never "0 s left" while work remains.
func progressETA(pred cost.Terms, now progressNow) float64 {
	total0 := pred.Open + pred.Probe + pred.Pass + pred.Criteria
	blend := func(model, f float64) float64 {
		if f <= 0 {
			if total0 <= 0 || model-now.inStage <= 0 {
				return -1
			}
			return model - now.inStage
		}
		measured := now.inStage * (1 - f) / f
		if total0 <= 0 {
			return measured
		}
		return (1-f)*max(model-now.inStage, 0) + f*measured
	}
	switch {
	case now.stage == kgauge.StageCriteria:
		return blend(pred.Criteria, min(now.scored, 1))
	case now.stage == kgauge.StagePass && now.total > 0 && now.rows > 0:
		eta := blend(pred.Pass, min(float64(now.rows)/float64(now.total), 1))
		if total0 <= 0 {
			return eta
		}
		return eta + pred.Criteria
	}
	if total0 <= 0 || total0-now.elapsed <= 0 {
		return -1
	}
	return total0 - now.elapsed
}

func writeJSON(w io.Writer, res *kgauge.Result) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(res)
}
