package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"strings"
	"text/tabwriter"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/capacity"
	"github.com/kgauge/kgauge/cost"
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
	noProbe := fs.Bool("no-probe", false, "skip the timed read; use the committed calibration only")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "Usage: kgauge plan [flags] PATH...\n\nPredict the wall time and peak memory of \"kgauge estimate\" with the same flags, from the\nfiles' metadata and a short timed read of a few row groups.\n\nFlags:")
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
	p, err := capacity.Forecast(ctx, fs.Args(), opt, !*noProbe)
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

func writePlanJSON(w io.Writer, p *capacity.Plan) error {
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

func writePlan(out io.Writer, p *capacity.Plan) error {
	var b strings.Builder
	w := p.Workload
	cal := p.Calibration
	fmt.Fprintf(&b, "input: %d file(s), %d unit(s), %d rows × %d columns, %s of column data\n",
		w.Files, w.Units, w.Rows, w.Dims, bytesText(w.Bytes))
	if pt := cal.Probe; pt != nil {
		runs := 0
		if pt.Criteria != nil {
			runs = len(pt.Criteria.Runs)
		}
		fmt.Fprintf(&b, "timed probe: %d unit(s), %d rows, %s read in %s (%s/s per worker); sketch %.2f ns/value, kernel %.2f G point·k·d/s, %d criteria runs in %s\n",
			pt.Units, pt.Rows, bytesText(pt.Bytes), secondsText(pt.ReadSeconds), bytesText(int64(cal.ScanBytesPerSec)),
			cal.AddSecPerValue*1e9, cal.KernelPKDPerSec/1e9, runs, secondsText(pt.CriteriaSeconds))
	} else {
		fmt.Fprintf(&b, "no timed probe: constants from the committed calibration (%s)\n", cal.Source)
	}
	fmt.Fprintf(&b, "\n== estimate with %d worker(s): about %s, peak memory about %s ==\n\n", w.Workers,
		secondsText(p.Seconds), bytesText(p.PeakBytes))

	tw := tabwriter.NewWriter(&b, 2, 4, 2, ' ', 0)
	t := p.Terms
	fmt.Fprintln(tw, "time term\tseconds\thow")
	fmt.Fprintf(tw, "open\t%.3f\t%d footer(s)\n", t.Open, w.Files)
	fmt.Fprintf(tw, "probe\t%.3f\t%d rows over up to %d units\n", t.Probe, min(int64(w.ProbeRows), w.Rows), w.ProbeUnits)
	fmt.Fprintf(tw, "pass: scan\t%.3f\tone worker, %s at %s/s\n", t.Scan, bytesText(w.Bytes), bytesText(int64(cal.ScanBytesPerSec)))
	fmt.Fprintf(tw, "pass: sketch\t%.3f\tone worker, rows × d × %.2f ns\n", t.Sketch, cal.AddSecPerValue*1e9)
	fmt.Fprintf(tw, "pass: mini-batch feed\t%.3f\tone worker, %d rows × Σk=%d × d\n", t.Feed, min(w.MiniBatchRows, max(w.Rows, 0)), w.SumK())
	fmt.Fprintf(tw, "pass\t%.3f\t÷ speed-up %.2f (parallel fraction %.2f)\n", t.Pass, t.Speedup, cal.ParallelFraction)
	fmt.Fprintf(tw, "criteria\t%.3f\tcoreset %d, k %d..%d, B=%d, gap sample %d, %d anchors\n", t.Criteria,
		w.Coreset, w.MinK, w.MaxK, w.GapRefs, w.GapSample, w.Anchors)
	fmt.Fprintf(tw, "total\t%.3f\t\n", p.Seconds)
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
