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

	"github.com/kgauge/kgauge/internal/errtext"
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

// unfinishedError reports partitions left incomplete or quarantined by a run that otherwise went
// through; it maps to ExitInput, ahead of drift.
type unfinishedError struct {
	incomplete, quarantined []string
	drifted                 int
}

func (e *unfinishedError) Error() string {
	var parts []string
	if len(e.incomplete) > 0 {
		parts = append(parts, fmt.Sprintf("%d partition(s) incomplete, retried by the next run: %s",
			len(e.incomplete), strings.Join(inertAll(e.incomplete), ", ")))
	}
	if len(e.quarantined) > 0 {
		parts = append(parts, fmt.Sprintf("%d partition(s) quarantined, not read: %s",
			len(e.quarantined), strings.Join(inertAll(e.quarantined), ", ")))
	}
	if e.drifted > 0 {
		parts = append(parts, fmt.Sprintf("drift in %d new partition(s)", e.drifted))
	}
	return "track: " + strings.Join(parts, "; ")
}

// listFlag is a flag that may be repeated and takes comma-separated values.
type listFlag []string

func (l *listFlag) String() string { return strings.Join(*l, ",") }

func (l *listFlag) Set(v string) error {
	for _, s := range strings.Split(v, ",") {
		if s = strings.TrimSpace(s); s != "" {
			*l = append(*l, strings.Trim(s, "/"))
		}
	}
	return nil
}

// runTrack runs the track command and returns its exit code: ExitDrift when a new partition
// drifted, otherwise that of report.
func runTrack(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	err := (&TrackCommand{Stdout: stdout, Stderr: stderr}).Run(ctx, args)
	var de *driftError
	var ue *unfinishedError
	var le *ledger.LockError
	var line *ledger.LineError
	var oe *ledger.OutputError
	var pe *ledger.PartitionError
	var use *ledger.UsageError
	switch {
	case errors.As(err, &de):
		fmt.Fprintln(stderr, "kgauge: "+de.Error())
		return ExitDrift
	case errors.As(err, &ue):
		fmt.Fprintln(stderr, "kgauge: "+ue.Error())
		return ExitInput
	case errors.As(err, &le), errors.As(err, &line), errors.As(err, &pe):
		fmt.Fprintln(stderr, "kgauge: track: "+inert(errtext.Line(strings.ReplaceAll(err.Error(), "\n", "; "))))
		return ExitInput
	case errors.As(err, &use):
		err = &usageError{msg: err.Error()}
	case errors.As(err, &oe):
		err = &outputError{err}
	}
	return report(err, stderr)
}

// Run parses args and runs the tracking.
func (c *TrackCommand) Run(ctx context.Context, args []string) error {
	fs := flag.NewFlagSet("track", flag.ContinueOnError)
	var f estimateFlags
	f.register(fs)
	rules := ledger.DefaultRules()
	var ledgerPath string
	var lockWait time.Duration
	var quarantine, release listFlag
	fs.StringVar(&ledgerPath, "ledger", "", "the ledger file (JSON Lines; created if missing); sketches go to FILE.sketches/")
	fs.IntVar(&rules.Window, "window", rules.Window, "earlier partitions each new one is compared with")
	fs.IntVar(&rules.MinHistory, "min-history", rules.MinHistory, "earlier partitions needed before the k and WCSS rules apply")
	fs.Float64Var(&rules.MinAgreement, "min-agreement", rules.MinAgreement, "agreement below this is drift (0 = off)")
	fs.Float64Var(&rules.WCSSRise, "wcss-rise", rules.WCSSRise, "WCSS per row at the window's k rising by more than this share of the window median is drift (0 = off)")
	fs.DurationVar(&lockWait, "lock-wait", 0, "how long to wait for another run's lock on the ledger (0 = fail at once)")
	fs.Var(&quarantine, "quarantine", "set the partition KEY=VALUE[/...] aside: recorded as quarantined and not read until --release (repeat or comma-separate)")
	fs.Var(&release, "release", "profile a quarantined partition again (repeat or comma-separate)")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), `Usage: kgauge track ROOT --ledger FILE [flags]

Profile every KEY=VALUE partition under ROOT not yet in the ledger, save its sketch beside the
ledger, and flag drift against the partitions before it. Exit code 5 when a new partition drifted.
A Delta Lake or Iceberg table at ROOT is tracked by its own partition values; a partition a later
version or snapshot changed is profiled again.

Flags:`)
		printFlags(fs)
	}
	if err := parseArgs(fs, args, c.Stdout); err != nil {
		return err
	}
	pos := fs.Args()
	switch {
	case len(pos) == 0:
		return usageErrorf("track: no ROOT given")
	case len(pos) > 1:
		return usageErrorf("track: one ROOT expected, got %d (%s)", len(pos), strings.Join(pos, " "))
	case ledgerPath == "":
		return usageErrorf("track: --ledger is required")
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
	opt.AfterPass = releasePassMemory
	enc := json.NewEncoder(c.Stdout)
	res, err := ledger.Track(ctx, pos[0], ledgerPath, ledger.TrackOptions{
		Estimate: opt, Drift: rules, LockWait: lockWait, Quarantine: quarantine, Release: release,
		OnRecord: func(r ledger.Record) error {
			if f.asJSON {
				return enc.Encode(r)
			}
			_, err := fmt.Fprintln(c.Stdout, recordLine(r))
			return err
		},
		Warn: func(msg string) { fmt.Fprintln(c.Stderr, "kgauge: track: "+inert(msg)) },
	})
	if err != nil {
		return err
	}
	if !f.quiet {
		changed := ""
		if len(res.Changed) > 0 {
			changed = fmt.Sprintf(" (%d of them changed by the table since their record)", len(res.Changed))
		}
		fmt.Fprintf(c.Stderr, "kgauge: track: %d record(s) added%s, %d partition(s) already done in %s, %d drifted\n",
			len(res.Profiled), changed, res.Known, inert(ledgerPath), res.Drifted)
	}
	if len(res.Incomplete) > 0 || len(res.Quarantined) > 0 {
		return &unfinishedError{incomplete: res.Incomplete, quarantined: res.Quarantined, drifted: res.Drifted}
	}
	if res.Drifted > 0 {
		return &driftError{res.Drifted}
	}
	return nil
}

// recordLine is the one-line text form of a record. Partition values and paths come from the
// lake and are made inert.
func recordLine(r ledger.Record) string {
	var b strings.Builder
	switch r.Status {
	case ledger.StatusFailed, ledger.StatusQuarantined:
		fmt.Fprintf(&b, "%s  %s  %s", inert(r.Partition), strings.ToUpper(r.Status), inert(r.Error))
		return b.String()
	}
	fmt.Fprintf(&b, "%s  k %d  agreement %s", inert(r.Partition), r.K, share(r.Agreement))
	if r.Table != nil {
		fmt.Fprintf(&b, "  %s %s", r.Table.Format, r.Table)
		if r.Table.DeletedRows > 0 {
			fmt.Fprintf(&b, " (%d rows deleted)", r.Table.DeletedRows)
		}
	}
	if r.RunnerUp != nil {
		fmt.Fprintf(&b, "  runner-up %d", *r.RunnerUp)
	}
	fmt.Fprintf(&b, "  rows %d (skipped %d)  ", r.Rows, r.SkippedRows)
	if r.Status == ledger.StatusIncomplete {
		b.WriteString("INCOMPLETE ")
		if len(r.SkippedFiles) > 0 {
			fmt.Fprintf(&b, "(%s skipped, the first %s: %s) ", plural(len(r.SkippedFiles), "file", "files"),
				inert(r.SkippedFiles[0].Path), inert(r.SkippedFiles[0].Reason))
		}
		if r.Error != "" {
			fmt.Fprintf(&b, "(%s) ", inert(r.Error))
		}
	}
	if !r.Drift.Drifted {
		b.WriteString("ok")
		return b.String()
	}
	msgs := make([]string, len(r.Drift.Reasons))
	for i, x := range r.Drift.Reasons {
		msgs[i] = x.Rule + ": " + x.Message
	}
	b.WriteString("DRIFT " + inert(strings.Join(msgs, "; ")))
	return b.String()
}
