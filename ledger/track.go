package ledger

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/internal/atomicfile"
)

// TrackOptions configures Track.
type TrackOptions struct {
	Estimate kgauge.Options
	Drift    Rules
	LockWait time.Duration // how long to wait for another run's lock; 0 fails at once
	// OnRecord, if set, is called after each record is in the ledger; an error stops Track.
	OnRecord func(Record) error
	// Warn, if set, receives notices: removed temporary files, an incomplete remnant, data files
	// outside any partition.
	Warn func(msg string)
	// Now returns the time stamped on records; nil means time.Now.
	Now func() time.Time
}

// TrackResult says what a Track run did.
type TrackResult struct {
	Profiled []Record // the records appended, in order
	Known    int      // partitions already in the ledger, left alone
	Drifted  int      // profiled partitions whose drift verdict is true
}

// OutputError is a failure to write the ledger or a sketch.
type OutputError struct{ Err error }

func (e *OutputError) Error() string { return e.Err.Error() }
func (e *OutputError) Unwrap() error { return e.Err }

// Track profiles, under the ledger's lock, every partition below root that the ledger at
// ledgerPath does not hold yet, in key order: it runs [kgauge.Estimate] on the partition's data
// files, saves the sketch to [SketchPath], checks drift against the records before it, and
// appends the record. An error stops the run; the records appended before it stay, and the failed
// partition is profiled again by the next run. Failures to write are *OutputError.
func Track(ctx context.Context, root, ledgerPath string, opt TrackOptions) (*TrackResult, error) {
	if err := opt.Drift.Validate(); err != nil {
		return nil, err
	}
	warn := opt.Warn
	if warn == nil {
		warn = func(string) {}
	}
	now := opt.Now
	if now == nil {
		now = time.Now
	}
	absRoot, err := filepath.Abs(root)
	if err != nil {
		return nil, fmt.Errorf("ledger: %w", err)
	}
	if st, err := os.Stat(filepath.Dir(ledgerPath)); err != nil || !st.IsDir() {
		return nil, &OutputError{fmt.Errorf("ledger: %s: directory %s does not exist", ledgerPath, filepath.Dir(ledgerPath))}
	}
	lock, err := Lock(ctx, ledgerPath, opt.LockWait)
	if err != nil {
		return nil, err
	}
	defer lock.Unlock()

	removed, err := RemoveTemps(ledgerPath)
	for _, p := range removed {
		warn(fmt.Sprintf("removed %s, left by an interrupted run", p))
	}
	if err != nil {
		return nil, &OutputError{err}
	}
	l, err := Open(ledgerPath)
	if err != nil {
		return nil, err
	}
	if l.Remnant != nil {
		warn(fmt.Sprintf("%s: %s", ledgerPath, l.Remnant))
	}
	parts, outside, err := Partitions(absRoot)
	if err != nil {
		return nil, err
	}
	if len(outside) > 0 {
		warn(fmt.Sprintf("%d data file(s) under %s are in no KEY=VALUE partition and are not tracked, the first %s",
			len(outside), root, outside[0]))
	}
	if len(parts) == 0 {
		return nil, &kgauge.InputError{Path: root, Err: errors.New("no KEY=VALUE partition with data files")}
	}
	res := &TrackResult{Profiled: []Record{}}
	for _, p := range parts {
		if l.Has(p.Key) {
			res.Known++
			continue
		}
		if err := ctx.Err(); err != nil {
			return res, err
		}
		rec, err := profile(ctx, p, absRoot, ledgerPath, opt, now)
		if err != nil {
			return res, err
		}
		rec.Drift = opt.Drift.Check(l.Records, &rec)
		if err := l.Append(rec); err != nil {
			return res, &OutputError{err}
		}
		res.Profiled = append(res.Profiled, rec)
		if rec.Drift.Drifted {
			res.Drifted++
		}
		if opt.OnRecord != nil {
			if err := opt.OnRecord(rec); err != nil {
				return res, err
			}
		}
	}
	return res, nil
}

// profile estimates one partition and saves its sketch.
func profile(ctx context.Context, p Partition, root, ledgerPath string, opt TrackOptions, now func() time.Time) (Record, error) {
	start := time.Now()
	at := now()
	r, sk, err := kgauge.Estimate(ctx, p.Files, opt.Estimate)
	if err != nil {
		return Record{}, fmt.Errorf("partition %s: %w", p.Key, err)
	}
	path, rel := SketchPath(ledgerPath, p.Key)
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return Record{}, &OutputError{fmt.Errorf("ledger: %w", err)}
	}
	var size int64
	err = atomicfile.Write(path, 0o644, func(w io.Writer) error {
		cw := &countWriter{w: w}
		err := sk.Encode(cw)
		size = cw.n
		return err
	})
	if err != nil {
		return Record{}, &OutputError{fmt.Errorf("ledger: sketch of %s: %w", p.Key, err)}
	}
	rec := NewRecord(p, root, r, rel, size, at)
	rec.Timings.Total = time.Since(start).Seconds()
	return rec, nil
}

type countWriter struct {
	w io.Writer
	n int64
}

func (c *countWriter) Write(b []byte) (int, error) {
	n, err := c.w.Write(b)
	c.n += int64(n)
	return n, err
}
