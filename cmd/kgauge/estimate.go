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

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/capacity"
	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/internal/atomicfile"
	"github.com/kgauge/kgauge/internal/cliflags"
	htmlreport "github.com/kgauge/kgauge/report"
	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
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

// showProgress draws a bar of rows read on w until the returned function is called. Its ETA starts
// from the model's predicted terms (zero when unknown) and moves to the rate
// measured on the rows read so far as the pass advances.
func showProgress(p *kgauge.Progress, w io.Writer, pred cost.Terms) func() {
	done := make(chan struct{})
	finished := make(chan struct{})
	start := time.Now()
	go func() {
		defer close(finished)
		var bar *progressbar.ProgressBar
		lastStage, stageStart := "", time.Now()
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
			if bar == nil && total > 0 {
				bar = progressbar.NewOptions64(total,
					progressbar.OptionSetWriter(w),
					progressbar.OptionSetDescription("reading"),
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
			rows := p.Rows.Load()
			stage, _ := p.Stage.Load().(string)
			if stage != lastStage {
				lastStage, stageStart = stage, time.Now()
			}
			bar.Set64(rows)
			label := "reading"
			if stage == "criteria" {
				label = "scoring k"
			}
			if eta := progressETA(pred, time.Since(start).Seconds(), stage, stageStart, rows, total); eta >= 0 {
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

// progressETA is the remaining seconds of the run, or -1 when nothing is known. Before the pass it is
// the model's prediction less the time elapsed. During the pass, at a share f of the rows read, the
// pass's remaining time is (1−f)·(model's) + f·(measured rate's), so the model leads at the start and
// the measurement at the end; the model's criteria time follows. While scoring k it is the model's
// criteria time less the time spent on them.
func progressETA(pred cost.Terms, elapsed float64, stage string, stageStart time.Time, rows, total int64) float64 {
	total0 := pred.Open + pred.Probe + pred.Pass + pred.Criteria
	inStage := time.Since(stageStart).Seconds()
	switch {
	case stage == "criteria":
		if total0 <= 0 {
			return -1
		}
		return max(pred.Criteria-inStage, 0)
	case stage == "pass" && total > 0 && rows > 0:
		f := min(float64(rows)/float64(total), 1)
		measured := inStage * (1 - f) / f
		if total0 <= 0 {
			return measured
		}
		return (1-f)*max(pred.Pass-inStage, 0) + f*measured + pred.Criteria
	}
	if total0 <= 0 {
		return -1
	}
	return max(total0-elapsed, 0)
}

func writeJSON(w io.Writer, res *kgauge.Result) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(res)
}
