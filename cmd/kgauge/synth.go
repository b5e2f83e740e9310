package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/kgauge/kgauge/bench/synth"
	laketable "github.com/kgauge/kgauge/stream/lake"
)

// SynthCommand runs "kgauge synth": it writes the demo lake of household load profiles.
type SynthCommand struct {
	Stdout, Stderr io.Writer
}

// synthFlags binds the generator's flags into synth.LoadOptions.
type synthFlags struct {
	opt         synth.LoadOptions
	order       string
	format      string
	compression string
	start       string
	delta       bool
}

// register binds the flags; withSeed is false where another flag set owns --seed.
func (f *synthFlags) register(fs *flag.FlagSet, withSeed bool) {
	f.opt = synth.DefaultLoadOptions()
	o := &f.opt
	fs.IntVar(&o.Rows, "rows", o.Rows, "rows (meters) per partition")
	fs.IntVar(&o.Archetypes, "archetypes", o.Archetypes, "usage archetypes, 1 to 6: commuters, home workers, night storage, rooftop solar, EV charging, small shops")
	fs.Float64Var(&o.HeatWave, "heat-wave", o.HeatWave, "share of homes (0 to 1) given an afternoon air-conditioning peak")
	fs.Float64Var(&o.Noise, "noise", o.Noise, "standard deviation of the hourly noise, kWh")
	fs.Float64Var(&o.NullShare, "nulls", o.NullShare, "share of rows with a meter outage (null hours)")
	fs.IntVar(&o.RowGroup, "row-group", o.RowGroup, "rows per Parquet row group or Arrow record batch")
	fs.IntVar(&o.Partitions, "partitions", o.Partitions, "day partitions to write")
	if withSeed {
		fs.Uint64Var(&o.Seed, "seed", o.Seed, "random seed; the same flags give the same files")
	}
	fs.StringVar(&f.order, "order", o.Order.String(), "row order: shuffled, or sorted (grouped by archetype, as a lake sorted by meter_id)")
	fs.StringVar(&f.format, "format", o.Format.String(), "file format: parquet, arrow (IPC file) or arrows (IPC stream)")
	fs.StringVar(&f.compression, "compression", o.Compression.String(), "Parquet compression: snappy, zstd or none")
	fs.StringVar(&f.start, "start", o.Start.Format(time.DateOnly), "first day, YYYY-MM-DD")
}

func (f *synthFlags) options() (synth.LoadOptions, error) {
	o := f.opt
	var err error
	if o.Order, err = synth.ParseOrder(f.order); err != nil {
		return o, usageErrorf("--order: %v", err)
	}
	if o.Format, err = synth.ParseFormat(f.format); err != nil {
		return o, usageErrorf("--format: %v", err)
	}
	if o.Compression, err = synth.ParseCompression(f.compression); err != nil {
		return o, usageErrorf("--compression: %v", err)
	}
	if o.Start, err = time.Parse(time.DateOnly, f.start); err != nil {
		return o, usageErrorf("--start: want YYYY-MM-DD, got %q", f.start)
	}
	if err := o.Validate(); err != nil {
		return o, usageErrorf("%v", err)
	}
	return o, nil
}

// Run parses args and writes the lake under the directory given by --out.
func (c *SynthCommand) Run(ctx context.Context, args []string) error {
	fs := flag.NewFlagSet("synth", flag.ContinueOnError)
	var f synthFlags
	f.register(fs, true)
	out := fs.String("out", "lake/loads", "directory to write day=YYYY-MM-DD/part-000.* under")
	fs.BoolVar(&f.delta, "delta", false, "write a Delta Lake table: commit the files to OUT/_delta_log as its next version (the first run creates the table, partitioned by day); a day already in the table is overwritten, its earlier files kept for older versions")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "Usage: kgauge synth [flags]\n\nWrite the demo lake: one row per meter per day, hourly kWh in h00..h23.\n\nFlags:")
		printFlags(fs)
	}
	if err := parseArgs(fs, args, c.Stdout); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return usageErrorf("synth: unexpected argument %q (use --out DIR)", fs.Arg(0))
	}
	opt, err := f.options()
	if err != nil {
		return err
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	var paths []string
	if f.delta {
		if opt.Format != synth.Parquet {
			return usageErrorf("--delta: Delta Lake tables hold Parquet files; drop --format %s", opt.Format)
		}
		var version int64
		paths, version, err = writeDeltaLoads(*out, opt)
		if err != nil {
			return &outputError{err}
		}
		fmt.Fprintf(c.Stderr, "kgauge: synth: delta table %s version %d\n", inert(*out), version)
	} else if paths, err = synth.WriteLoads(*out, opt); err != nil {
		return &outputError{err}
	}
	for _, p := range paths {
		fmt.Fprintln(c.Stdout, p)
	}
	return nil
}

// writeDeltaLoads writes the demo partitions as the next version of the Delta table at dir: the
// files are written to a staging folder inside dir (its "_" name keeps it out of every listing),
// moved to day=YYYY-MM-DD/part-NNN.parquet under the first free NNN, so that the files of older
// versions stay as they were, and committed, replacing the days written.
func writeDeltaLoads(dir string, opt synth.LoadOptions) ([]string, int64, error) {
	stage := filepath.Join(dir, fmt.Sprintf("_kgauge-synth-%d", os.Getpid()))
	defer os.RemoveAll(stage)
	staged, err := synth.WriteLoads(stage, opt)
	if err != nil {
		return nil, 0, err
	}
	var paths []string
	var files []laketable.DeltaFile
	for _, p := range staged {
		day := filepath.Base(filepath.Dir(p))
		var rel string
		for n := 0; ; n++ {
			rel = fmt.Sprintf("%s/part-%03d.parquet", day, n)
			if _, err := os.Lstat(filepath.Join(dir, filepath.FromSlash(rel))); errors.Is(err, fs.ErrNotExist) {
				break
			}
		}
		target := filepath.Join(dir, filepath.FromSlash(rel))
		if err := os.MkdirAll(filepath.Dir(target), 0o755); err != nil {
			return paths, 0, err
		}
		if err := os.Rename(p, target); err != nil {
			return paths, 0, err
		}
		st, err := os.Stat(target)
		if err != nil {
			return paths, 0, err
		}
		paths = append(paths, target)
		files = append(files, laketable.DeltaFile{Path: rel, Partition: map[string]string{"day": strings.TrimPrefix(day, "day=")}, Size: st.Size()})
	}
	var cols []laketable.DeltaColumn
	for _, f := range synth.LoadSchema().Fields() {
		t := map[arrow.Type]string{arrow.STRING: "string", arrow.DATE32: "date", arrow.FLOAT32: "float", arrow.FLOAT64: "double", arrow.INT64: "long"}[f.Type.ID()]
		if t == "" {
			return paths, 0, fmt.Errorf("synth: column %s: no Delta type for %s", f.Name, f.Type)
		}
		cols = append(cols, laketable.DeltaColumn{Name: f.Name, Type: t, Nullable: f.Nullable})
	}
	v, err := laketable.CommitDelta(dir, cols, []string{"day"}, files, true)
	return paths, v, err
}
