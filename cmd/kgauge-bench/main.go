// Command kgauge-bench runs kgauge's benchmark suites and writes their reports. Run from the
// repository root:
//
//	go run ./cmd/kgauge-bench accuracy --out bench/report          # the committed report (full mode)
//	go run ./cmd/kgauge-bench accuracy --quick --out /tmp/acc      # a two-minute check of the machinery
//
// It holds flags only; the measurements are package bench.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"syscall"

	"github.com/kgauge/kgauge/bench"
)

// Exit codes.
const (
	exitOK       = 0
	exitInternal = 1
	exitUsage    = 2
	exitOutput   = 4
	exitSignal   = 130
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := Run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

const usageText = `kgauge-bench measures kgauge and writes reports.

Usage:
  kgauge-bench accuracy [flags]   accuracy given up per approximation and size (bench/report/ACCURACY.md)
`

// Run executes one command and returns the exit code.
func Run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		fmt.Fprint(stderr, usageText)
		return exitUsage
	}
	switch args[0] {
	case "accuracy":
		return runAccuracy(ctx, args[1:], stderr)
	case "help", "-h", "-help", "--help":
		fmt.Fprint(stdout, usageText)
		return exitOK
	}
	fmt.Fprintf(stderr, "kgauge-bench: unknown command %q\n%s", args[0], usageText)
	return exitUsage
}

func runAccuracy(ctx context.Context, args []string, stderr io.Writer) int {
	fs := flag.NewFlagSet("accuracy", flag.ContinueOnError)
	fs.SetOutput(stderr)
	out := fs.String("out", "bench/report", "folder for ACCURACY.md, the CSV tables and the PNG plots")
	quick := fs.Bool("quick", false, "small sizes and few repeats (about two minutes); not for the committed report")
	workers := fs.Int("workers", 0, "goroutines (0 = all CPUs); results do not depend on it")
	seed := fs.Uint64("seed", 1, "base seed of every random choice")
	save := fs.String("save", "", "also write the raw results to this file (gob), for --load")
	load := fs.String("load", "", "render the report from results saved by --save instead of measuring")
	data := fs.String("data", "", "comma-separated folders searched for the reference sets (default testdata/refsets,../shared/data)")
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return exitOK
		}
		return exitUsage
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(stderr, "kgauge-bench: accuracy takes no arguments, got %q\n", fs.Arg(0))
		return exitUsage
	}
	cfg := bench.FullAccuracy()
	if *quick {
		cfg = bench.QuickAccuracy()
	}
	cfg.Workers, cfg.Seed = *workers, *seed
	if *data != "" {
		cfg.DataDirs = strings.Split(*data, ",")
	}
	if err := cfg.Validate(); err != nil {
		fmt.Fprintf(stderr, "kgauge-bench: %v\n", err)
		return exitUsage
	}
	var res *bench.Accuracy
	var err error
	if *load != "" {
		res, err = bench.LoadAccuracy(*load)
	} else {
		res, err = bench.RunAccuracy(ctx, cfg, stderr)
	}
	if err == nil && *save != "" {
		err = bench.SaveAccuracy(*save, res)
	}
	if err != nil {
		fmt.Fprintf(stderr, "kgauge-bench: %v\n", err)
		if ctx.Err() != nil {
			return exitSignal
		}
		return exitInternal
	}
	command := "go run ./cmd/kgauge-bench accuracy --out " + *out
	if res.Config.Mode == "quick" {
		command = "go run ./cmd/kgauge-bench accuracy --quick --out " + *out
	}
	if *load == "" && (*workers != 0 || *seed != 1 || *data != "") {
		command = "go run ./cmd/kgauge-bench accuracy " + strings.Join(args, " ")
	}
	if err := bench.WriteAccuracyReport(*out, res, command); err != nil {
		fmt.Fprintf(stderr, "kgauge-bench: %v\n", err)
		return exitOutput
	}
	fmt.Fprintf(stderr, "kgauge-bench: wrote %s/ACCURACY.md in %.0f s\n", *out, res.Total)
	return exitOK
}
