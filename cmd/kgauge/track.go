package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"strings"
	"time"

	"github.com/kgauge/kgauge/ledger"
)

// TrackCommand runs "kgauge track": it profiles every partition of a lake not yet in a ledger,
// saves each partition's sketch beside the ledger, and reports drift.
type TrackCommand struct {
	Stdout, Stderr io.Writer
}

// driftError reports that newly profiled partitions drifted; it maps to ExitDrift.
type driftError struct{ n int }

func (e *driftError) Error() string { return fmt.Sprintf("track: drift in %d new partition(s)", e.n) }

// runTrack runs the track command and returns its exit code: ExitDrift when a new partition
// drifted, otherwise that of report.
func runTrack(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	err := (&TrackCommand{Stdout: stdout, Stderr: stderr}).Run(ctx, args)
	var de *driftError
	var le *ledger.LockError
	var line *ledger.LineError
	var oe *ledger.OutputError
	switch {
	case errors.As(err, &de):
		fmt.Fprintln(stderr, "kgauge: "+de.Error())
		return ExitDrift
	case errors.As(err, &le), errors.As(err, &line):
		fmt.Fprintln(stderr, "kgauge: track: "+err.Error())
		return ExitInput
	case errors.As(err, &oe):
		err = &outputError{err}
	}
	return report(err, stderr)
}

// Run parses args and runs the tracking.
func (c *TrackCommand) Run(ctx context.Context, args []string) error {
	fs := flag.NewFlagSet("track", flag.ContinueOnError)
	fs.SetOutput(c.Stderr)
	var f estimateFlags
	f.register(fs)
	rules := ledger.DefaultRules()
	var ledgerPath string
	var lockWait time.Duration
	fs.StringVar(&ledgerPath, "ledger", "", "the ledger file (JSON Lines; created if missing); sketches go to FILE.sketches/")
	fs.IntVar(&rules.Window, "window", rules.Window, "earlier partitions each new one is compared with")
	fs.IntVar(&rules.MinHistory, "min-history", rules.MinHistory, "earlier partitions needed before the k and WCSS rules apply")
	fs.Float64Var(&rules.MinAgreement, "min-agreement", rules.MinAgreement, "agreement below this is drift (0 = off)")
	fs.Float64Var(&rules.WCSSRise, "wcss-rise", rules.WCSSRise, "WCSS per row at the window's k rising by more than this share of the window median is drift (0 = off)")
	fs.DurationVar(&lockWait, "lock-wait", 0, "how long to wait for another run's lock on the ledger (0 = fail at once)")
	fs.Usage = func() {
		fmt.Fprintln(c.Stderr, `Usage: kgauge track ROOT --ledger FILE [flags]

Profile every KEY=VALUE partition under ROOT not yet in the ledger, save its sketch beside the
ledger, and flag drift against the partitions before it. Exit code 5 when a new partition drifted.

Flags:`)
		fs.PrintDefaults()
	}
	// Flags may come before and after ROOT.
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return err
			}
			return usageErrorf("track: %v%s", err, rangeHint(err))
		}
		if fs.NArg() == 0 {
			break
		}
		pos = append(pos, fs.Arg(0))
		args = fs.Args()[1:]
	}
	if err := checkRanges(fs); err != nil {
		return err
	}
	switch {
	case len(pos) == 0:
		return usageErrorf("track: no ROOT given")
	case len(pos) > 1:
		return usageErrorf("track: one ROOT expected, got %d (%s)", len(pos), strings.Join(pos, " "))
	case ledgerPath == "":
		return usageErrorf("track: --ledger is required")
	case f.out != "":
		return usageErrorf("track: --out is not used by track; records go to the ledger")
	case f.report != "":
		return usageErrorf("track: --report is not used by track; run estimate --report on a partition or its sketch")
	case f.saveSketch != "":
		return usageErrorf("track: --save-sketch is not used by track; sketches go to %s", ledger.SketchDir(ledgerPath))
	case lockWait < 0:
		return usageErrorf("track: --lock-wait must not be negative, got %s", lockWait)
	}
	if err := rules.Validate(); err != nil {
		return usageErrorf("track: %v", err)
	}
	opt, err := f.options()
	if err != nil {
		return err
	}
	enc := json.NewEncoder(c.Stdout)
	res, err := ledger.Track(ctx, pos[0], ledgerPath, ledger.TrackOptions{
		Estimate: opt, Drift: rules, LockWait: lockWait,
		OnRecord: func(r ledger.Record) error {
			if f.asJSON {
				return enc.Encode(r)
			}
			_, err := fmt.Fprintln(c.Stdout, recordLine(r))
			return err
		},
		Warn: func(msg string) { fmt.Fprintln(c.Stderr, "kgauge: track: "+msg) },
	})
	if err != nil {
		return err
	}
	if !f.quiet {
		fmt.Fprintf(c.Stderr, "kgauge: track: %d new partition(s) profiled, %d already in %s, %d drifted\n",
			len(res.Profiled), res.Known, ledgerPath, res.Drifted)
	}
	if res.Drifted > 0 {
		return &driftError{res.Drifted}
	}
	return nil
}

// recordLine is the one-line text form of a record.
func recordLine(r ledger.Record) string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s  k %d  agreement %.2f", r.Partition, r.K, r.Agreement)
	if r.RunnerUp != nil {
		fmt.Fprintf(&b, "  runner-up %d", *r.RunnerUp)
	}
	fmt.Fprintf(&b, "  rows %d (skipped %d)  ", r.Rows, r.SkippedRows)
	if !r.Drift.Drifted {
		b.WriteString("ok")
		return b.String()
	}
	msgs := make([]string, len(r.Drift.Reasons))
	for i, x := range r.Drift.Reasons {
		msgs[i] = x.Rule + ": " + x.Message
	}
	b.WriteString("DRIFT " + strings.Join(msgs, "; "))
	return b.String()
}
