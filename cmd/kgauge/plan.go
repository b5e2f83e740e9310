package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/capacity"
	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/atomicfile"
)

// PlanCommand runs "kgauge plan": it prices an estimate before it runs.
type PlanCommand struct {
	Stdout, Stderr io.Writer
}

// Run parses args, plans and prints the plan.
func (c *PlanCommand) Run(ctx context.Context, args []string) error {
	fs := flag.NewFlagSet("plan", flag.ContinueOnError)
	var f estimateFlags
	f.register(fs)
	f.registerOutputs(fs, withOut)
	noProbe := fs.Bool("no-probe", false, "skip the timed read of the input and its second figure; print the calibrated figure only")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "Usage: kgauge plan [flags] PATH...\n\nPredict the wall time and peak memory of \"kgauge estimate\" with the same flags from the\nfiles' metadata and the committed calibration (the figure the estimate's progress bar and report\nstart from), and beside it a second figure from a short timed read of a few row groups.\n\nFlags:")
		printFlags(fs)
	}
	if err := parseArgs(fs, args, c.Stdout); err != nil {
		return err
	}
	if fs.NArg() == 0 {
		return usageErrorf("plan: no PATH given")
	}
	opt, err := f.options()
	if err != nil {
		return err
	}
	if f.out != "" {
		if err := checkOutputDir(f.out); err != nil {
			return err
		}
	}
	p, err := forecast(ctx, fs.Args(), opt, !*noProbe)
	if err != nil {
		return err
	}
	if f.out != "" {
		if err := atomicfile.Write(f.out, 0o644, func(w io.Writer) error { return writePlanJSON(w, p) }); err != nil {
			return &outputError{err}
		}
	}
	if f.asJSON {
		return writePlanJSON(c.Stdout, p)
	}
	return writePlan(c.Stdout, p)
}

// planOutput is what plan prints: the calibrated plan, the one figure that the estimate's progress
// bar, its report's planned column and --memory use too, and unless --no-probe the second figure
// priced from a timed probe of the input.
type planOutput struct {
	*capacity.Plan
	Timed *timedFigure `json:"timed,omitempty"`
}

// timedFigure is the prediction priced from a timed probe of the input, beside the calibrated plan.
type timedFigure struct {
	Calibration cost.Calibration `json:"calibration"` // the probe's rates and criteria runs under probe
	cost.Prediction
	Difference  float64 `json:"difference"`   // predicted seconds over the calibrated plan's, minus one
	PlanSeconds float64 `json:"plan_seconds"` // what the timed probe took
}

// forecast makes the calibrated plan and, when timed, the timed figure beside it.
func forecast(ctx context.Context, paths []string, opt kgauge.Options, timed bool) (*planOutput, error) {
	p, err := capacity.Forecast(ctx, paths, opt, false)
	if err != nil {
		return nil, err
	}
	out := &planOutput{Plan: p}
	if !timed {
		return out, nil
	}
	tp, err := capacity.Forecast(ctx, paths, opt, true)
	if err != nil {
		return nil, err
	}
	out.Timed = &timedFigure{Calibration: tp.Calibration, Prediction: tp.Prediction, PlanSeconds: tp.PlanSeconds}
	if p.Seconds > 0 {
		out.Timed.Difference = tp.Seconds/p.Seconds - 1
	}
	return out, nil
}

// timedApart is how far apart the timed and calibrated figures may be before plan says which to
// trust: the ±25% the plan aims at (bench/plan-accuracy.md).
const timedApart = 0.25

// timedAdvice is the line plan prints when the timed figure differs from the calibrated one by
// more than timedApart (diff is timed ÷ calibrated − 1), saying which to expect the run nearer;
// empty otherwise. It is the calibrated one: the timed runs price each k alone, so they miss what
// only a whole range of k does, which the calibration's whole stages measure. Above the default
// range that is mostly the mixtures' stop (each single-k run fits that k's mixtures, while the
// estimate stops fitting them once BIC and ICL have settled; bench/plan-accuracy.md: +131% timed
// against +17% calibrated at --max-k 40); within it, the fits started again from each
// neighbouring k and the gap statistic's reference paths across k (the same run: the calibrated
// figure nearer on 7 of the 8 inputs within the default range, the timed one 24–68% short on them).
func timedAdvice(maxK int, diff float64) string {
	if !(math.Abs(diff) > timedApart) {
		return ""
	}
	if maxK > criteria.DefaultOptions().MaxK {
		return fmt.Sprintf("   the two differ by more than %.0f%%: above k = %d the timed runs fit every k's Gaussian mixtures, which the estimate stops fitting once BIC and ICL have settled; expect the run nearer the calibrated figure\n",
			100*timedApart, criteria.DefaultOptions().MaxK)
	}
	return fmt.Sprintf("   the two differ by more than %.0f%%: the timed runs price each k alone and miss what a whole range of k does (the fits started again from neighbouring k, the gap statistic's reference paths); expect the run nearer the calibrated figure\n", 100*timedApart)
}

func writePlanJSON(w io.Writer, p *planOutput) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(p)
}

// bytesText writes n bytes with a binary unit.
func bytesText(n int64) string {
	v := float64(n)
	for _, u := range []string{"B", "KiB", "MiB", "GiB", "TiB"} {
		if v < 1024 || u == "TiB" {
			if u == "B" {
				return fmt.Sprintf("%d B", n)
			}
			return fmt.Sprintf("%.1f %s", v, u)
		}
		v /= 1024
	}
	return ""
}

// secondsText writes a duration in seconds with a readable precision.
func secondsText(s float64) string {
	switch {
	case s >= 3600:
		return fmt.Sprintf("%.1f h", s/3600)
	case s >= 120:
		return fmt.Sprintf("%.1f min", s/60)
	case s >= 10:
		return fmt.Sprintf("%.0f s", s)
	case s >= 0.1:
		return fmt.Sprintf("%.2f s", s)
	}
	return fmt.Sprintf("%.3f s", s)
}

func writePlan(out io.Writer, po *planOutput) error {
	var b strings.Builder
	p := po.Plan
	w := p.Workload
	cal := p.Calibration
	fmt.Fprintf(&b, "input: %d file(s), %d unit(s), %d rows × %d columns, %s of column data\n",
		w.Files, w.Units, w.Rows, w.Dims, bytesText(w.Bytes))
	fmt.Fprintf(&b, "calibrated: constants from the committed calibration (%s)\n", cal.Source)
	tf := po.Timed
	if tf != nil && tf.Calibration.Probe != nil {
		pt, tc := tf.Calibration.Probe, tf.Calibration
		runs := 0
		if pt.Criteria != nil {
			runs = len(pt.Criteria.Runs)
		}
		fmt.Fprintf(&b, "timed probe: %d unit(s), %d rows, %s read in %s (%s/s per worker); sketch %.2f ns/value, kernel %.2f G point·k·d/s, %d criteria runs in %s\n",
			pt.Units, pt.Rows, bytesText(pt.Bytes), secondsText(pt.ReadSeconds), bytesText(int64(tc.ScanBytesPerSec)),
			tc.AddSecPerValue*1e9, tc.KernelPKDPerSec/1e9, runs, secondsText(pt.CriteriaSeconds))
	}
	fmt.Fprintf(&b, "\n== estimate with %d worker(s): about %s, peak memory about %s ==\n", w.Workers,
		secondsText(p.Seconds), bytesText(p.PeakBytes))
	b.WriteString("   the estimate's progress bar, its report's planned column and --memory use this same figure\n")
	if tf != nil {
		fmt.Fprintf(&b, "   timed on this input: about %s (%+.0f%% from it), peak memory about %s\n",
			secondsText(tf.Seconds), 100*tf.Difference, bytesText(tf.PeakBytes))
		b.WriteString(timedAdvice(w.MaxK, tf.Difference))
	}
	b.WriteString("\n")

	tw := tabwriter.NewWriter(&b, 2, 4, 2, ' ', 0)
	t := p.Terms
	var tt cost.Terms
	if tf != nil {
		tt = tf.Terms
		fmt.Fprintln(tw, "time term\tseconds\ttimed\thow")
	} else {
		fmt.Fprintln(tw, "time term\tseconds\thow")
	}
	term := func(name string, v, timedV float64, how string) {
		if tf != nil {
			fmt.Fprintf(tw, "%s\t%.3f\t%.3f\t%s\n", name, v, timedV, how)
			return
		}
		fmt.Fprintf(tw, "%s\t%.3f\t%s\n", name, v, how)
	}
	term("open", t.Open, tt.Open, fmt.Sprintf("%d footer(s)", w.Files))
	term("probe", t.Probe, tt.Probe, fmt.Sprintf("%d rows over up to %d units", min(int64(w.ProbeRows), w.Rows), w.ProbeUnits))
	term("pass: scan", t.Scan, tt.Scan, fmt.Sprintf("one worker, %s at %s/s", bytesText(w.Bytes), bytesText(int64(cal.ScanBytesPerSec))))
	term("pass: sketch", t.Sketch, tt.Sketch, fmt.Sprintf("one worker, rows × d × %.2f ns", cal.AddSecPerValue*1e9))
	term("pass: mini-batch feed", t.Feed, tt.Feed, fmt.Sprintf("one worker, %d rows × Σk=%d × d", min(w.MiniBatchRows, max(w.Rows, 0)), w.SumK()))
	term("pass", t.Pass, tt.Pass, fmt.Sprintf("÷ speed-up %.2f (parallel fraction %.2f)", t.Speedup, cal.ParallelFraction))
	term("criteria", t.Criteria, tt.Criteria, fmt.Sprintf("coreset %d, k %d..%d, B=%d, gap sample %d, %d anchors",
		w.Coreset, w.MinK, w.MaxK, w.GapRefs, w.GapSample, w.Anchors))
	term("total", p.Seconds, tt.Open+tt.Probe+tt.Pass+tt.Criteria, "")
	fmt.Fprintln(tw, "\t\t")
	m := p.Memory
	fmt.Fprintln(tw, "memory term\tbytes\t")
	for _, r := range []struct {
		name string
		v    int64
		how  string
	}{{"runtime and footers", m.Base, "measured baseline"}, {"sketches", m.Sketches, "pass: coreset, sample, per-k state × workers"},
		{"read buffers", m.ReadBuffers, fmt.Sprintf("pass: %d rows × d × workers", w.BatchRows)},
		{"page buffers", m.PageBuffers, "pass: one page per column chunk × workers"},
		{"probe rows", m.Probe, "probe"}, {"criteria", m.Criteria, "merged sketch, summary, gap references, fits, covariance and eigen work, Ward"},
		{"largest stage", m.Live, "max(probe, pass, criteria)"},
		{"peak", m.Peak, fmt.Sprintf("base + (1 + GOGC/100) × largest stage, GOGC %d", cost.GCPercent)}} {
		fmt.Fprintf(tw, "%s\t%s\t%s\n", r.name, bytesText(r.v), r.how)
	}
	if err := tw.Flush(); err != nil {
		return err
	}

	b.WriteString("\nby workers (same data)\n")
	tw = tabwriter.NewWriter(&b, 2, 4, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "workers\tpass speed-up\tpredicted\tpeak memory\t")
	for _, r := range p.Workers {
		fmt.Fprintf(tw, "%d\t%.2f\t%s\t%s\t\n", r.Workers, r.Speedup, secondsText(r.Seconds), bytesText(r.PeakBytes))
	}
	tw.Flush()
	b.WriteString("\nby data size (same workers)\n")
	tw = tabwriter.NewWriter(&b, 2, 4, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "data\trows\tbytes\tpredicted\tpeak memory\t")
	for _, r := range p.Scales {
		fmt.Fprintf(tw, "%g×\t%d\t%s\t%s\t%s\t\n", r.DataScale, r.Rows, bytesText(r.Bytes), secondsText(r.Seconds), bytesText(r.PeakBytes))
	}
	tw.Flush()
	for _, n := range p.Notes {
		fmt.Fprintf(&b, "note: %s\n", n)
	}
	fmt.Fprintf(&b, "note: predictions of the cost model (package cost); bench/plan-accuracy.md records how close they came\n")
	_, err := io.WriteString(out, b.String())
	return err
}

// planFor prices the estimate from the footers alone with the committed calibration, for the
// progress bar, the projection and the report; the prediction is nil when the inputs cannot be priced
// (saved sketches only, or an error the estimate itself will report).
func planFor(paths []string, opt kgauge.Options) (cost.Workload, *cost.Prediction) {
	w, err := kgauge.PlanWorkload(paths, opt)
	if err != nil {
		return w, nil
	}
	p := cost.Predict(w, cost.Default())
	return w, &p
}
