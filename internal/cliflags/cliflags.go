// Package cliflags binds the command-line flags that choose what an estimate computes to
// kgauge.Options. The kgauge commands and kgauge-beam share it, so that a flag means the same in
// every binary.
package cliflags

import (
	"flag"
	"fmt"
	"strconv"
	"strings"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/stream"
)

// The range of --memory.
const (
	MinMemory = 1 << 20
	MaxMemory = 1 << 50
)

// UsageError is a bad flag value; its message names the flag.
type UsageError struct{ Msg string }

func (e *UsageError) Error() string { return e.Msg }

func usagef(format string, args ...any) error { return &UsageError{Msg: fmt.Sprintf(format, args...)} }

// Data holds the estimate's data flags once registered: the input columns, scaling, k range,
// seed, every sample size, and the memory limit. Opt carries the library defaults until the flags
// are parsed.
type Data struct {
	Opt     kgauge.Options
	fs      *flag.FlagSet
	columns string
	scale   string
	memory  string
	reduce  string

	// Lake tables (README "Lake tables"): how a Delta Lake or Apache Iceberg table is read.
	asFiles      bool
	tableVersion string
	snapshot     string
	where        whereFlag
}

// whereFlag collects repeated --where KEY=VALUE filters.
type whereFlag []string

func (w *whereFlag) String() string { return strings.Join(*w, ",") }

func (w *whereFlag) Set(s string) error {
	*w = append(*w, s)
	return nil
}

// Register binds the flags into d, with the library's defaults.
func (d *Data) Register(fs *flag.FlagSet) {
	d.Opt = kgauge.DefaultOptions()
	d.fs = fs
	o := &d.Opt
	fs.StringVar(&d.columns, "columns", "", "comma-separated feature columns (default: every numeric column)")
	fs.StringVar(&d.scale, "scale", string(o.Scale), "feature scaling: auto (z-score; a positive right-skewed column whose logarithm is near symmetric is log-scaled), zscore, range, log (logarithm of every column, then z-score; every value > 0) or none")
	fs.IntVar(&o.Criteria.MinK, "min-k", o.Criteria.MinK, "smallest k to score")
	fs.IntVar(&o.Criteria.MaxK, "max-k", o.Criteria.MaxK, "largest k to score")
	fs.Uint64Var(&o.Seed, "seed", o.Seed, "seed of every random choice; the same input, flags and seed give the same result")
	fs.IntVar(&o.Sketch.CoresetSize, "coreset", o.Sketch.CoresetSize, "rows in the weighted coreset")
	fs.IntVar(&o.Sketch.SampleSize, "sample", o.Sketch.SampleSize, "rows in the uniform sample")
	fs.Int64Var(&o.Sketch.MiniBatchRows, "minibatch-rows", o.Sketch.MiniBatchRows, "rows fed to mini-batch k-means over the pass")
	fs.IntVar(&o.Criteria.Restarts, "restarts", o.Criteria.Restarts, "k-means++ restarts per k on the coreset")
	fs.IntVar(&o.Criteria.Anchors, "anchors", o.Criteria.Anchors, "silhouette anchor points, stratified by cluster")
	fs.IntVar(&o.Criteria.GapRefs, "gap-refs", o.Criteria.GapRefs, "Monte Carlo reference sets (B) of the gap statistic")
	fs.IntVar(&o.Criteria.GapSample, "gap-sample", o.Criteria.GapSample, "points per gap reference set and on the data side")
	fs.IntVar(&o.ProbeRows, "probe-rows", o.ProbeRows, "rows read before the pass to fix the scale")
	fs.IntVar(&o.BatchRows, "batch-rows", o.BatchRows, "rows per read batch")
	fs.StringVar(&d.reduce, "reduce", "auto", "dimensions the criteria run in for wide inputs: auto (the leading principal components above 64 columns), off, or a number of dimensions (2 to 1000)")
	fs.StringVar(&d.memory, "memory", "", "memory limit such as 512MiB or 2GiB: sizes shrink to fit the estimate (default: no limit)")
	fs.BoolVar(&d.asFiles, "as-files", false, "read a Delta Lake or Iceberg table's folder as plain files, removed ones included")
	fs.StringVar(&d.tableVersion, "table-version", "", "Delta Lake table version to read (default: the latest)")
	fs.StringVar(&d.snapshot, "snapshot", "", "Apache Iceberg snapshot id to read (default: the current snapshot)")
	fs.Var(&d.where, "where", "KEY=VALUE: read only files whose partition has that value (tables: from their log or manifests; folders: KEY=VALUE segments); repeat for more keys")
}

// tables checks and returns the lake table flags.
func (d *Data) tables() (stream.DiscoverOptions, error) {
	t := stream.DiscoverOptions{AsFiles: d.asFiles}
	if d.tableVersion != "" {
		v, err := strconv.ParseInt(d.tableVersion, 10, 64)
		if err != nil || v < 0 {
			return t, usagef("--table-version must be a Delta table version (0, 1, ...), got %q", d.tableVersion)
		}
		t.Table.Version = &v
	}
	if d.snapshot != "" {
		v, err := strconv.ParseInt(d.snapshot, 10, 64)
		if err != nil || v == 0 {
			return t, usagef("--snapshot must be an Iceberg snapshot id (a non-zero integer), got %q", d.snapshot)
		}
		t.Table.Snapshot = v
	}
	if d.tableVersion != "" && d.snapshot != "" {
		return t, usagef("--table-version (Delta) and --snapshot (Iceberg) cannot be given together")
	}
	if d.asFiles && (d.tableVersion != "" || d.snapshot != "") {
		return t, usagef("--as-files reads plain files; it cannot be given with --table-version or --snapshot")
	}
	w, err := stream.ParseWhere(d.where)
	if err != nil {
		return t, usagef("--where: %v", err)
	}
	t.Table.Where = w
	return t, nil
}

// Options returns the bound options after checking the values; a bad one is a *UsageError
// naming its flag.
func (d *Data) Options() (kgauge.Options, error) {
	o := d.Opt
	if d.fs != nil {
		if err := CheckRanges(d.fs); err != nil {
			return o, err
		}
	}
	// Zero would mean "default" to the library; on the command line it is a mistake.
	for _, c := range []struct {
		name string
		v    int64
	}{{"--coreset", int64(o.Sketch.CoresetSize)}, {"--sample", int64(o.Sketch.SampleSize)},
		{"--minibatch-rows", o.Sketch.MiniBatchRows}, {"--restarts", int64(o.Criteria.Restarts)},
		{"--anchors", int64(o.Criteria.Anchors)}, {"--gap-refs", int64(o.Criteria.GapRefs)},
		{"--gap-sample", int64(o.Criteria.GapSample)}, {"--probe-rows", int64(o.ProbeRows)},
		{"--batch-rows", int64(o.BatchRows)}, {"--min-k", int64(o.Criteria.MinK)}, {"--max-k", int64(o.Criteria.MaxK)}} {
		if c.v < 1 {
			return o, usagef("%s must be at least 1, got %d", c.name, c.v)
		}
	}
	sc, err := kgauge.ParseScale(d.scale)
	if err != nil {
		return o, usagef("--scale: %v", err)
	}
	o.Scale = sc
	if d.memory != "" {
		if o.Memory, err = kgauge.ParseBytes(d.memory); err != nil {
			return o, usagef("--memory: %v", err)
		}
		if o.Memory < MinMemory || o.Memory > MaxMemory {
			return o, usagef("--memory must be 1MiB to 1PiB, got %s", d.memory)
		}
	}
	if d.columns != "" {
		for _, c := range strings.Split(d.columns, ",") {
			if c = strings.TrimSpace(c); c != "" {
				o.Columns = append(o.Columns, c)
			}
		}
		if len(o.Columns) == 0 {
			return o, usagef("--columns: no column named")
		}
	}
	switch d.reduce {
	case "auto", "":
		o.Reduce = 0
	case "off":
		o.Reduce = -1
	default:
		m, err := strconv.Atoi(d.reduce)
		if err != nil || m < 2 || m > 1000 {
			return o, usagef("--reduce must be auto, off or a number of dimensions from 2 to 1000, got %q", d.reduce)
		}
		o.Reduce = m
	}
	if o.Tables, err = d.tables(); err != nil {
		return o, err
	}
	if err := o.Validate(); err != nil {
		return o, usagef("%s", flagNames(err))
	}
	return o, nil
}

// flagNames rewrites option names in validation messages as the flags users typed.
func flagNames(err error) string {
	msg := err.Error()
	for _, r := range [][2]string{{"max-k", "--max-k"}, {"min-k", "--min-k"}, {"workers", "--workers"},
		{"batch rows", "--batch-rows"}, {"probe rows", "--probe-rows"}, {"coreset size", "--coreset"},
		{"sample size", "--sample"}, {"mini-batch rows", "--minibatch-rows"}, {"restarts", "--restarts"},
		{"anchors", "--anchors"}, {"gap refs", "--gap-refs"}, {"gap sample", "--gap-sample"}} {
		msg = strings.Replace(msg, r[0], r[1], 1)
	}
	return msg
}
