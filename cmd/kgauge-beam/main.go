// Command kgauge-beam runs kgauge's estimate as an Apache Beam pipeline: locally on the embedded
// prism runner, or on Flink, Spark or Dataflow through Beam's runners. It takes the data flags of
// `kgauge estimate` and Beam's own flags (--runner, --endpoint, --environment_type, …), and prints
// the same JSON result as `kgauge estimate --json`.
//
// Usage:
//
//	kgauge-beam [flags] PATH...
//
// The runner may start this same binary as a worker (with --worker); beam.Init then serves the
// work and exits, so main parses flags and calls it before doing anything else.
package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"

	abeam "github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/runners"
	_ "github.com/apache/beam/sdks/v2/go/pkg/beam/x/beamx" // registers every runner and file system
	_ "gocloud.dev/blob/azureblob"                         // azblob:// inputs; this binary links the big SDKs anyway
	_ "gocloud.dev/blob/gcsblob"                           // gs:// inputs

	"github.com/kgauge/kgauge"
	kbeam "github.com/kgauge/kgauge/beam"
	"github.com/kgauge/kgauge/internal/cliflags"
	"github.com/kgauge/kgauge/internal/errtext"
	"github.com/kgauge/kgauge/internal/exitcode"
	"github.com/kgauge/kgauge/stream/objstore"
	_ "github.com/kgauge/kgauge/stream/objstore/s3" // s3:// inputs and --out
)

// Exit codes: those of kgauge (internal/exitcode).
const (
	exitOK          = exitcode.OK
	exitInternal    = exitcode.Internal
	exitUsage       = exitcode.Usage
	exitInput       = exitcode.Input
	exitInterrupted = exitcode.Interrupted
)

type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }
func (e *usageError) ExitCode() int { return exitUsage }

// flags are the data flags kgauge-beam shares with `kgauge estimate` (internal/cliflags), and --out.
type flags struct {
	cliflags.Data
	out string
}

func (f *flags) register(fs *flag.FlagSet) {
	f.Data.Register(fs)
	fs.StringVar(&f.out, "out", "", "file the pipeline writes the JSON result to (default with prism: a temporary file); the workers must be able to write it")
}

// options checks the flag values as `kgauge estimate` does.
func (f *flags) options() (kgauge.Options, error) {
	f.Opt.Workers = 1 // the runner parallelises; each work item is read by one goroutine
	o, err := f.Data.Options()
	if err != nil {
		return o, &usageError{err.Error()}
	}
	return o, nil
}

func main() {
	var f flags
	f.register(flag.CommandLine)
	flag.Usage = func() {
		fmt.Fprintf(os.Stderr, "usage: kgauge-beam [flags] PATH...\n\nkgauge's estimate as an Apache Beam pipeline; "+
			"prints the JSON result of `kgauge estimate --json`.\nBeam's flags (--runner, --endpoint, --environment_type, "+
			"--environment_config, --worker_binary, …) are listed with the others.\n\n")
		flag.PrintDefaults()
	}
	flag.Parse()
	// A worker started by the runner serves its work here and exits.
	abeam.Init()

	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	os.Exit(report(run(ctx, &f, flag.Args(), os.Stdout), os.Stderr))
}

// run plans and runs the pipeline, then prints the result when the launcher can read it.
func run(ctx context.Context, f *flags, paths []string, stdout io.Writer) error {
	opt, err := f.options()
	if err != nil {
		return err
	}
	if len(paths) == 0 {
		return &usageError{"no PATH given (files, directories or globs)"}
	}
	runner := *runners.Runner
	if runner == "" {
		runner = "prism"
	}
	out := f.out
	if out == "" {
		if runner != "prism" {
			return &usageError{"--out is required with --runner " + runner}
		}
		dir, err := os.MkdirTemp("", "kgauge-beam-")
		if err != nil {
			return err
		}
		defer os.RemoveAll(dir)
		out = filepath.Join(dir, "result.json")
	}
	if _, err := kbeam.Run(ctx, runner, paths, opt, out); err != nil {
		return err
	}
	var data []byte
	if objstore.IsURL(out) {
		fmt.Fprintf(os.Stderr, "kgauge-beam: the result is in %s\n", out)
		return nil
	}
	data, err = os.ReadFile(out)
	if err != nil {
		fmt.Fprintf(os.Stderr, "kgauge-beam: the result was written by the workers to %s\n", out)
		return nil
	}
	_, err = stdout.Write(data)
	return err
}

// report prints err as one line and returns its exit code.
func report(err error, stderr io.Writer) int {
	if err == nil {
		return exitOK
	}
	code := exitcode.Of(err)
	msg := errtext.Line(strings.ReplaceAll(err.Error(), "\n", "; "))
	if !strings.HasPrefix(msg, "kgauge") {
		msg = "kgauge-beam: " + msg
	}
	fmt.Fprintln(stderr, msg)
	return code
}
