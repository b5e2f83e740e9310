package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/kgauge/kgauge/bench/synth"
)

// DemoCommand runs "kgauge demo": it writes a small partition of the demo scenario to a temporary
// directory, estimates its k and says which k the generator used.
type DemoCommand struct {
	Stdout, Stderr io.Writer
}

// Run parses args and runs the demo.
func (c *DemoCommand) Run(ctx context.Context, args []string) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	fs.SetOutput(c.Stderr)
	var sf synthFlags
	sf.register(fs, false)
	var ef estimateFlags
	ef.register(fs)
	fs.Usage = func() {
		fmt.Fprintln(c.Stderr, "Usage: kgauge demo [flags]\n\nSynthesise one day of household load profiles, estimate its k and compare with the truth.\nIt takes the flags of synth and estimate.\n\nFlags:")
		fs.PrintDefaults()
	}
	if err := parseArgs(fs, args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return usageErrorf("demo: unexpected argument %q", fs.Arg(0))
	}
	gen, err := sf.options()
	if err != nil {
		return err
	}
	gen.Partitions = 1
	gen.Seed = ef.Opt.Seed
	opt, err := ef.options()
	if err != nil {
		return err
	}
	dir, err := os.MkdirTemp("", "kgauge-demo-")
	if err != nil {
		return &outputError{err}
	}
	defer os.RemoveAll(dir)
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
	if !ef.asJSON {
		fmt.Fprintf(c.Stdout, "demo: %d household load profiles (24 hourly kWh columns) from %d archetypes: %s\n",
			gen.Rows, truth, strings.Join(names, ", "))
		fmt.Fprintf(c.Stdout, "demo: written to %s, estimating k = %d..%d\n\n", paths[0], opt.Criteria.MinK, opt.Criteria.MaxK)
	}
	res, err := runEstimate(ctx, paths, opt, &ef, c.Stderr)
	if res == nil {
		return err
	}
	if perr := printResult(c.Stdout, res, ef.asJSON); perr != nil {
		return perr
	}
	if !ef.asJSON {
		verdict := "matches"
		if res.K != truth {
			verdict = "differs from"
		}
		fmt.Fprintf(c.Stdout, "\ndemo: the generator used k = %d; the verdict %s it.\n", truth, verdict)
	}
	return err // an output that could not be written
}
