package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
)

// DemoCommand runs "kgauge demo": it writes one partition of the demo scenario, estimates its k
// and says which k the generator used. The partition goes to a temporary directory that is removed
// afterwards, or to --keep DIR, which is kept.
type DemoCommand struct {
	Stdout, Stderr io.Writer
}

// demoFlags are the flags that make sense for a demonstration: the scenario's shape, the k range,
// the seed, the workers and the output form. The sketch and criteria sizes are the estimate's
// defaults.
type demoFlags struct {
	gen      synth.LoadOptions
	maxK     int
	seed     uint64
	workers  int
	asJSON   bool
	quiet    bool
	wide     bool
	report   string
	keep     string
	estimate estimateFlags
}

func (f *demoFlags) register(fs *flag.FlagSet) {
	f.gen = synth.DefaultLoadOptions()
	f.gen.Partitions = 1
	def := kgauge.DefaultOptions()
	g := &f.gen
	fs.IntVar(&g.Rows, "rows", g.Rows, "household load profiles (rows) to synthesise")
	fs.IntVar(&g.Archetypes, "archetypes", g.Archetypes, "usage archetypes, 1 to 6 (the true k): commuters, home workers, night storage, rooftop solar, EV charging, small shops")
	fs.Float64Var(&g.HeatWave, "heat-wave", g.HeatWave, "share of homes (0 to 1) given an afternoon air-conditioning peak (one more archetype)")
	fs.Float64Var(&g.Noise, "noise", g.Noise, "standard deviation of the hourly noise, kWh")
	fs.Float64Var(&g.NullShare, "nulls", g.NullShare, "share of rows with a meter outage (null hours)")
	fs.IntVar(&f.maxK, "max-k", def.Criteria.MaxK, "largest k to score")
	fs.Uint64Var(&f.seed, "seed", def.Seed, "seed of the synthetic data and of the estimate")
	fs.IntVar(&f.workers, "workers", def.Workers, "goroutines reading and sketching")
	fs.BoolVar(&f.asJSON, "json", false, "print the estimate as one JSON document instead of the table")
	fs.BoolVar(&f.quiet, "quiet", false, "no progress bar")
	fs.BoolVar(&f.wide, "wide", false, "the per-k table with the silhouette's 95% interval and the gap's s_k (wider than 120 columns)")
	fs.StringVar(&f.report, "report", "", "also write a self-contained HTML report with plots to this file")
	fs.StringVar(&f.keep, "keep", "", "write the synthetic partition under this directory and keep it (default: a temporary directory, removed)")
}

// Run parses args and runs the demo.
func (c *DemoCommand) Run(ctx context.Context, args []string) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	var f demoFlags
	f.register(fs)
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "Usage: kgauge demo [flags]\n\nSynthesise one day of household load profiles, estimate its k and compare with the\nk the generator used. Nothing is kept unless --keep names a directory.\n\nFlags:")
		printFlags(fs)
	}
	if err := parseArgs(fs, args, c.Stdout); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return usageErrorf("demo: unexpected argument %q", fs.Arg(0))
	}
	gen := f.gen
	gen.Seed = f.seed
	if err := gen.Validate(); err != nil {
		return usageErrorf("%v", err)
	}
	opt := kgauge.DefaultOptions()
	opt.Seed, opt.Workers, opt.Criteria.MaxK = f.seed, f.workers, f.maxK
	if f.workers < 1 {
		return usageErrorf("--workers must be at least 1, got %d", f.workers)
	}
	if err := opt.Validate(); err != nil {
		return usageErrorf("%v", err)
	}
	ef := &f.estimate
	ef.asJSON, ef.quiet, ef.report = f.asJSON, f.quiet, f.report

	dir := f.keep
	if dir == "" {
		tmp, err := os.MkdirTemp("", "kgauge-demo-")
		if err != nil {
			return &outputError{err}
		}
		defer os.RemoveAll(tmp)
		dir = tmp
	} else if err := os.MkdirAll(dir, 0o755); err != nil {
		return &outputError{fmt.Errorf("--keep %s: %w", dir, err)}
	}
	paths, err := synth.WriteLoads(dir, gen)
	if err != nil {
		return &outputError{err}
	}
	truth := gen.Archetypes
	names := synth.ArchetypeNames()[:gen.Archetypes]
	if gen.HeatWave > 0 {
		truth++
		names = append(names, synth.ArchetypeNames()[6])
	}
	if !f.asJSON {
		fmt.Fprintf(c.Stdout, "demo: synthesised %d household load profiles (24 hourly kWh columns) from %d archetypes: %s\n",
			gen.Rows, truth, strings.Join(names, ", "))
		if f.keep != "" {
			fmt.Fprintf(c.Stdout, "demo: kept in %s\n", filepath.Dir(paths[0]))
		} else {
			fmt.Fprintln(c.Stdout, "demo: in a temporary folder, removed afterwards (--keep DIR keeps it)")
		}
		fmt.Fprintf(c.Stdout, "demo: estimating k = %d..%d\n\n", opt.Criteria.MinK, opt.Criteria.MaxK)
	}
	res, err := runEstimate(ctx, paths, opt, ef, c.Stderr)
	if res == nil {
		return err
	}
	if perr := printResult(c.Stdout, res, f.asJSON, f.wide); perr != nil {
		return perr
	}
	if !f.asJSON {
		verdict := "matches"
		if res.K != truth {
			verdict = "differs from"
		}
		fmt.Fprintf(c.Stdout, "\ndemo: the generator used k = %d; the verdict %s it.\n", truth, verdict)
	}
	return err // an output that could not be written
}
