package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"time"

	"github.com/kgauge/kgauge/bench/synth"
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
	paths, err := synth.WriteLoads(*out, opt)
	if err != nil {
		return &outputError{err}
	}
	for _, p := range paths {
		fmt.Fprintln(c.Stdout, p)
	}
	return nil
}
