package ledger

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"time"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/internal/atomicfile"
	"github.com/kgauge/kgauge/internal/errtext"
	"github.com/kgauge/kgauge/stream"
)

// TrackOptions configures Track.
type TrackOptions struct {
	Estimate kgauge.Options // Estimate.SkipUnreadable: profile a partition from the files that can be read
	Drift    Rules
	LockWait time.Duration // how long to wait for another run's lock; 0 fails at once
	// Quarantine names partitions to set aside: a quarantined record is added for each that is not
	// quarantined yet, and none is read. Release names quarantined partitions to profile again.
	// Both must name partitions found below root.
	Quarantine, Release []string
	// OnRecord, if set, is called after each record is in the ledger; an error stops Track.
	OnRecord func(Record) error
	// Warn, if set, receives notices: removed temporary files, an incomplete remnant, data files
	// outside any partition, sketches rebuilt.
	Warn func(msg string)
	// Now returns the time stamped on records; nil means time.Now.
	Now func() time.Time
}

// TrackResult says what a Track run did.
type TrackResult struct {
	Profiled    []Record // the records appended, in order (every status)
	Known       int      // partitions done before, left alone
	Drifted     int      // profiled partitions whose drift verdict is true
	Incomplete  []string // partitions recorded incomplete by this run
	Quarantined []string // partitions set aside (quarantined now or before)
	Failed      string   // the partition whose failure stopped the run, or ""
	Rebuilt     []string // done partitions profiled again because their saved sketch was missing
	// Changed are done partitions of a lake table profiled again because the table's state of
	// them (live files, row deletes) differs from their record's: a later version or snapshot
	// added, removed or rewrote their files, or deleted rows.
	Changed []string
	// Gone are partitions done in the ledger for this root that the table state read no longer
	// holds (dropped or deleted whole); they are left as they are.
	Gone []string
}

// OutputError is a failure to write the ledger or a sketch.
type OutputError struct{ Err error }

func (e *OutputError) Error() string { return e.Err.Error() }
func (e *OutputError) Unwrap() error { return e.Err }

// PartitionError is the failure of one partition, recorded in the ledger as failed; it stops the
// run (the partitions after it keep their order and are profiled once it is fixed, quarantined or
// released).
type PartitionError struct {
	Partition string
	Err       error
}

func (e *PartitionError) Error() string {
	return fmt.Sprintf("partition %s: %v (recorded as failed and retried by the next run; --quarantine %s sets it aside)",
		e.Partition, e.Err, e.Partition)
}

func (e *PartitionError) Unwrap() error { return e.Err }

// UsageError is a bad Quarantine or Release name, or an output that is an input.
type UsageError struct{ Err error }

func (e *UsageError) Error() string { return e.Err.Error() }
func (e *UsageError) Unwrap() error { return e.Err }

// Track profiles, under the ledger's lock, every partition below root whose state in the ledger
// at ledgerPath is not done, in key order: it runs [kgauge.Estimate] on the partition's data
// files, saves the sketch to [SketchPath], checks drift against the done records before it, and
// appends the record.
//
// When root is a Delta Lake or Apache Iceberg table (or a folder inside one), the partitions are
// the table's own partition values in the version or snapshot read ([PartitionsWith]; the latest
// unless Estimate.Tables says otherwise), each profiled through the table (its row deletes
// applied) pinned to that state, and recorded with it ([Record].Table). A done partition whose
// live files or row deletes have changed since its record (a later commit or snapshot) is
// profiled again ([TrackResult].Changed).
//
// The ledger is found through symbolic links ([atomicfile.Resolve]): the lock, the temporary
// files and the sketches go beside the real file, and the link is never replaced. Before anything
// is read, the ledger, its lock and the partitions' sketch files are checked against the data
// files below root (a *UsageError wrapping a *kgauge.ClashError when one is a data file).
//
// A partition with a data file that cannot be read fails unless Estimate.SkipUnreadable, which
// records it as incomplete (with its skipped files); a partition whose estimate fails on its
// input is recorded as failed and stops the run with a *PartitionError; both are profiled again
// by the next run. A done partition whose saved sketch is missing is profiled again. Quarantined
// partitions are passed over. Failures to write are *OutputError; a sketch that cannot be saved
// still leaves its record (incomplete, with the error) before the run stops.
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
	// The lock and every write go by the real file, so two runs through different names (a
	// symbolic link) exclude each other and a link to the ledger stays a link.
	real, err := atomicfile.Resolve(ledgerPath)
	if err != nil {
		return nil, &OutputError{fmt.Errorf("ledger: %w", err)}
	}
	lock, err := Lock(ctx, real, opt.LockWait)
	if err != nil {
		return nil, err
	}
	defer lock.Unlock()

	parts, outside, err := PartitionsWith(absRoot, opt.Estimate.Tables)
	if err != nil {
		return nil, err
	}
	if len(parts) == 0 {
		return nil, &kgauge.InputError{Path: root, Err: errors.New("no KEY=VALUE partition with data files")}
	}
	if err := checkTrackOutputs(real, ledgerPath, parts); err != nil {
		return nil, err
	}
	removed, err := RemoveTemps(real)
	for _, p := range removed {
		warn(fmt.Sprintf("removed %s, left by an interrupted run", p))
	}
	if err != nil {
		return nil, &OutputError{err}
	}
	l, err := Open(real)
	if err != nil {
		return nil, err
	}
	if l.Remnant != nil {
		warn(fmt.Sprintf("%s: %s", ledgerPath, l.Remnant))
	}
	if len(outside) > 0 {
		warn(fmt.Sprintf("%d data file(s) under %s are in no KEY=VALUE partition and are not tracked, the first %s",
			len(outside), root, outside[0]))
	}
	if err := badNames(parts, opt.Quarantine, opt.Release); err != nil {
		return nil, &UsageError{err}
	}
	quarantine, release := toSet(opt.Quarantine), toSet(opt.Release)
	res := &TrackResult{Profiled: []Record{}}
	appendRec := func(rec Record) error {
		if err := l.Append(rec); err != nil {
			return &OutputError{err}
		}
		res.Profiled = append(res.Profiled, rec)
		if opt.OnRecord != nil {
			return opt.OnRecord(rec)
		}
		return nil
	}
	if parts[0].Table != nil {
		res.Gone = gonePartitions(l, absRoot, parts)
		for _, g := range res.Gone {
			warn(fmt.Sprintf("partition %s is in the ledger but no longer in the %s table (%s); its records are kept", g, parts[0].Table.Format, parts[0].Table))
		}
	}
	for _, p := range parts {
		latest := l.Latest(p.Key)
		if quarantine[p.Key] || (latest != nil && latest.Status == StatusQuarantined && !release[p.Key]) {
			res.Quarantined = append(res.Quarantined, p.Key)
			if latest == nil || latest.Status != StatusQuarantined {
				msg := "quarantined by --quarantine; not read until --release " + p.Key
				if err := appendRec(newStateRecord(p, absRoot, StatusQuarantined, msg, now())); err != nil {
					return res, err
				}
			}
			continue
		}
		if latest != nil && latest.Status == StatusDone {
			switch {
			case !sameState(latest, p):
				res.Changed = append(res.Changed, p.Key)
			case sketchExists(real, latest.Sketch):
				res.Known++
				continue
			default:
				warn(fmt.Sprintf("partition %s: its saved sketch %s is missing; profiling it again", p.Key, latest.Sketch))
				res.Rebuilt = append(res.Rebuilt, p.Key)
			}
		}
		if err := ctx.Err(); err != nil {
			return res, err
		}
		rec, perr := profile(ctx, p, absRoot, real, opt, now)
		var oe *OutputError
		switch {
		case perr == nil:
		case errors.As(perr, &oe) && rec.Partition != "":
			// The verdict stands; only its sketch is missing. Keep it, marked incomplete.
			rec.Status, rec.Error = StatusIncomplete, "sketch not saved: "+perr.Error()
			rec.Drift = opt.Drift.Check(l.History(), &rec)
			if err := appendRec(rec); err != nil {
				return res, err
			}
			res.Incomplete = append(res.Incomplete, p.Key)
			return res, perr
		case isInputFailure(perr):
			res.Failed = p.Key
			if err := appendRec(newStateRecord(p, absRoot, StatusFailed, oneLine(perr), now())); err != nil {
				return res, err
			}
			return res, &PartitionError{Partition: p.Key, Err: perr}
		default:
			return res, fmt.Errorf("partition %s: %w", p.Key, perr)
		}
		rec.Drift = opt.Drift.Check(l.History(), &rec)
		if err := appendRec(rec); err != nil {
			return res, err
		}
		if rec.Status == StatusIncomplete {
			res.Incomplete = append(res.Incomplete, p.Key)
		}
		if rec.Drift.Drifted {
			res.Drifted++
		}
	}
	return res, nil
}

// isInputFailure reports whether err is a problem with a partition's data (what exit code 3
// means), not an interruption, an output failure or a bug.
func isInputFailure(err error) bool {
	var re *stream.ReadError
	var ie *kgauge.InputError
	return errors.As(err, &re) || errors.As(err, &ie) || errors.Is(err, kgauge.ErrNoRows) ||
		errors.Is(err, kgauge.ErrTooFewRows) || errors.Is(err, fs.ErrNotExist) || errors.Is(err, fs.ErrPermission)
}

// oneLine is the failure reason a ledger record keeps: the message on one line, in the user's terms.
func oneLine(err error) string { return errtext.Of(err) }

func toSet(names []string) map[string]bool {
	set := map[string]bool{}
	for _, n := range names {
		set[n] = true
	}
	return set
}

func hasPartition(parts []Partition, key string) bool {
	for _, p := range parts {
		if p.Key == key {
			return true
		}
	}
	return false
}

// badNames names the first --quarantine or --release value that is no partition.
func badNames(parts []Partition, quarantine, release []string) error {
	for _, f := range []struct {
		flag  string
		names []string
	}{{"--quarantine", quarantine}, {"--release", release}} {
		for _, n := range f.names {
			if !hasPartition(parts, n) {
				return fmt.Errorf("track: %s %q: no such partition below the root (give its KEY=VALUE path, e.g. %s)", f.flag, n, parts[0].Key)
			}
		}
	}
	return nil
}

// sketchExists reports whether the saved sketch rel (relative to the ledger's directory) exists.
func sketchExists(ledgerPath, rel string) bool {
	if rel == "" {
		return false
	}
	_, err := os.Stat(filepath.Join(filepath.Dir(ledgerPath), filepath.FromSlash(rel)))
	return err == nil
}

// checkTrackOutputs fails when the ledger, its lock or a partition's sketch file is one of the
// data files below the root (the same file by device and inode).
func checkTrackOutputs(real, given string, parts []Partition) error {
	keys := map[string]string{}
	for _, p := range parts {
		for _, f := range p.Files {
			if k, ok := stream.FileKey(f); ok {
				keys[k] = f
			}
		}
		for _, s := range p.Skipped {
			if k, ok := stream.FileKey(s.Path); ok {
				keys[k] = s.Path
			}
		}
	}
	outs := []kgauge.Output{{Flag: "--ledger", Path: given}, {Flag: "--ledger (its lock)", Path: LockPath(real)}}
	for _, p := range parts {
		path, _ := SketchPath(real, p.Key)
		outs = append(outs, kgauge.Output{Flag: "--ledger (sketch of " + p.Key + ")", Path: path})
	}
	if err := kgauge.CheckOutputKeys(keys, outs); err != nil {
		return &UsageError{err}
	}
	return nil
}

// profile estimates one partition and saves its sketch. A partition with unreadable files fails
// unless opt.Estimate.SkipUnreadable. When only the sketch cannot be saved, it returns the record
// (without a sketch) and the *OutputError.
func profile(ctx context.Context, p Partition, root, ledgerPath string, opt TrackOptions, now func() time.Time) (Record, error) {
	start := time.Now()
	at := now()
	if len(p.Skipped) > 0 && !opt.Estimate.SkipUnreadable {
		return Record{}, p.Skipped[0].Err
	}
	if len(p.Files) == 0 {
		return Record{}, &kgauge.InputError{Path: p.Dir, Err: fmt.Errorf("%w left: every data file of the partition was skipped as unreadable", stream.ErrNoDataFiles)}
	}
	paths, eopt := p.Files, opt.Estimate
	if p.Table != nil {
		// The table itself, filtered to the partition's values and pinned to the state its files
		// came from, so that the estimate applies the table's row deletes exactly as estimate does
		// and a commit made meanwhile cannot change what is read.
		paths = []string{root}
		eopt.Tables.AsFiles = false
		eopt.Tables.Table.Where = nil
		for _, kv := range p.Values {
			eopt.Tables.Table.Where = append(eopt.Tables.Table.Where, stream.KeyValue{Key: kv.Key, Value: kv.Value})
		}
		eopt.Tables.Table.Version, eopt.Tables.Table.Snapshot = p.Table.Version, 0
		if p.Table.Snapshot != nil {
			eopt.Tables.Table.Snapshot = *p.Table.Snapshot
		}
	}
	r, sk, err := kgauge.Estimate(ctx, paths, eopt)
	if err != nil {
		return Record{}, err
	}
	if p.Table != nil && len(r.Files) != len(p.Files) {
		return Record{}, fmt.Errorf("ledger: partition %s of %s: read %d live files, the table state names %d", p.Key, root, len(r.Files), len(p.Files))
	}
	for _, s := range p.Skipped {
		r.SkippedFiles = append(r.SkippedFiles, kgauge.SkippedFile{Path: s.Path, Reason: s.Reason})
	}
	path, rel := SketchPath(ledgerPath, p.Key)
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		rec := NewRecord(p, root, r, "", 0, at)
		rec.Timings.Total = time.Since(start).Seconds()
		return rec, &OutputError{fmt.Errorf("ledger: %w", err)}
	}
	var size int64
	err = atomicfile.Write(path, 0o644, func(w io.Writer) error {
		cw := &countWriter{w: w}
		err := sk.Encode(cw)
		size = cw.n
		return err
	})
	if err != nil {
		rec := NewRecord(p, root, r, "", 0, at)
		rec.Timings.Total = time.Since(start).Seconds()
		return rec, &OutputError{fmt.Errorf("ledger: sketch of %s: %w", p.Key, err)}
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

// sameState reports whether the done record rec profiled partition p as it is now. A hive folder
// is left alone once done. A table partition is the same when its state digest is; a record
// before schema 3 (no table) is the same when it read the same files and no row deletes apply now.
func sameState(rec *Record, p Partition) bool {
	if p.Table == nil {
		return true
	}
	if rec.Table != nil {
		return rec.Table.Format == p.Table.Format && rec.Table.State == p.Table.State
	}
	if p.Table.DeletedRows > 0 || len(rec.Files) != len(p.Files) {
		return false
	}
	have := map[string]bool{}
	for _, f := range rec.Files {
		have[filepath.Join(rec.Root, filepath.FromSlash(f.Path))] = true
	}
	for _, f := range p.Files {
		if !have[f] {
			return false
		}
	}
	return true
}

// gonePartitions lists the partitions whose latest record below root is done but which parts (a
// table's state) no longer holds, sorted.
func gonePartitions(l *Ledger, root string, parts []Partition) []string {
	now := map[string]bool{}
	for _, p := range parts {
		now[p.Key] = true
	}
	var gone []string
	for _, r := range l.History() {
		if r.Root == root && !now[r.Partition] {
			gone = append(gone, r.Partition)
		}
	}
	sort.Strings(gone)
	return gone
}

// String names the table state: "version 4" or "snapshot 4985199244698268960".
func (t *TableState) String() string {
	switch {
	case t.Version != nil:
		return fmt.Sprintf("version %d", *t.Version)
	case t.Snapshot != nil:
		return fmt.Sprintf("snapshot %d", *t.Snapshot)
	}
	return "unknown state"
}
