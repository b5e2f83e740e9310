// Command kgauge estimates the number of clusters k in Parquet and Arrow IPC files too large for
// memory, in one streaming pass. Run "kgauge help" for the commands.
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"sync"
	"syscall"
	"time"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	tuneRuntime()
	code := Run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// stopGrace is how long Run lets a cancelled command stop by itself (every stage checks the
// context, and an output being written is finished or removed) before it gives up on it.
const stopGrace = 200 * time.Millisecond

// Run executes one kgauge command with the given arguments and streams and returns the exit code.
//
// The command runs in its own goroutine. When ctx is cancelled (SIGINT, SIGTERM) Run waits at most
// stopGrace for it to return and then returns ExitInterrupted without it, so that no stage, however
// long its inner loop (an eigen decomposition, a blocked open), can delay the exit by more than that:
// main exits right after, and the streams are closed to the abandoned command, so it can print
// nothing more. A panic in the command's goroutine is a bug: it is reported as one line asking for
// a report, with exit code 1 and no stack trace.
func Run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	out, errw := newGate(stdout), newGate(stderr)
	done := make(chan int, 1)
	go func() {
		defer func() {
			if p := recover(); p != nil {
				done <- report(&internalError{fmt.Sprintf("panic: %v", p)}, errw)
			}
		}()
		done <- runCommand(ctx, args, out, errw)
	}()
	select {
	case code := <-done:
		return code
	case <-ctx.Done():
	}
	select {
	case code := <-done:
		return code
	case <-time.After(stopGrace):
	}
	out.close()
	errw.close()
	return report(context.Canceled, stderr)
}

// gate is a writer that can be closed to a command Run has given up on.
type gate struct {
	mu     sync.Mutex
	w      io.Writer
	closed bool
}

func newGate(w io.Writer) *gate { return &gate{w: w} }

func (g *gate) Write(p []byte) (int, error) {
	g.mu.Lock()
	defer g.mu.Unlock()
	if g.closed {
		return 0, errStreamClosed
	}
	return g.w.Write(p)
}

func (g *gate) close() {
	g.mu.Lock()
	g.closed = true
	g.mu.Unlock()
}

// Fd returns the file descriptor of the underlying stream, so that a terminal is still recognised,
// or ^uintptr(0) when it is not a file.
func (g *gate) Fd() uintptr {
	if f, ok := g.w.(interface{ Fd() uintptr }); ok {
		return f.Fd()
	}
	return ^uintptr(0)
}

var errStreamClosed = errors.New("stream closed after an interrupt")

// beforeCommand, when set (by tests), runs before the command; a test makes it panic to check
// how Run reports a bug.
var beforeCommand func(args []string)

// runCommand dispatches args to their command.
func runCommand(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	if beforeCommand != nil {
		beforeCommand(args)
	}
	if len(args) == 0 {
		fmt.Fprint(stderr, usageText)
		return ExitUsage
	}
	var err error
	switch args[0] {
	case "estimate":
		err = (&EstimateCommand{Stdout: stdout, Stderr: stderr}).Run(ctx, args[1:])
	case "plan":
		err = (&PlanCommand{Stdout: stdout, Stderr: stderr}).Run(ctx, args[1:])
	case "synth":
		err = (&SynthCommand{Stdout: stdout, Stderr: stderr}).Run(ctx, args[1:])
	case "track":
		return runTrack(ctx, args[1:], stdout, stderr)
	case "demo":
		err = (&DemoCommand{Stdout: stdout, Stderr: stderr}).Run(ctx, args[1:])
	case "version", "--version", "-version":
		fmt.Fprintln(stdout, "kgauge", versionString())
		return ExitOK
	case "help", "-h", "-help", "--help":
		if args[0] == "help" && len(args) > 1 {
			if _, ok := commands[args[1]]; ok {
				return Run(ctx, []string{args[1], "--help"}, stdout, stderr)
			}
			return report(usageErrorf("help: unknown command %q", args[1]), stderr)
		}
		fmt.Fprint(stdout, usageText)
		return ExitOK
	default:
		err = usageErrorf("unknown command %q", args[0])
	}
	return report(err, stderr)
}

// commands are the subcommands "help COMMAND" knows.
var commands = map[string]bool{"estimate": true, "plan": true, "synth": true, "track": true, "demo": true}

const usageText = `kgauge estimates the number of clusters k in Parquet and Arrow IPC files, in one pass.

Usage:
  kgauge estimate [flags] PATH...   score every k in range and give a verdict
  kgauge plan [flags] PATH...       predict the estimate's wall time and peak memory before it runs
  kgauge synth [flags]              write the demo lake of household load profiles
  kgauge demo [flags]               synthesise a small partition and estimate its k
  kgauge track ROOT --ledger FILE   profile new KEY=VALUE partitions into a ledger, flag drift
  kgauge version                    print the version (also --version)
  kgauge help [COMMAND]             this text, or a command's flags

PATH is a file, a directory (read recursively), a glob (** matches any depth), or a sketch file
saved with --save-sketch. Flags may come before or after PATHs; "--" ends the flags. Run
"kgauge help COMMAND" or "kgauge COMMAND --help" for a command's flags, "kgauge --version" for
the version.

Exit codes:
  0    success
  1    internal error: a bug in kgauge (please report it)
  2    usage: unknown command or flag, bad flag value; an output that is an input
  3    bad input: missing, unreadable or invalid file; column problems; too few usable rows;
       track: a partition failed, is incomplete or quarantined
  4    an output file could not be written
  5    track: a newly profiled partition drifted (see the ledger's drift reasons)
  130  interrupted (SIGINT or SIGTERM); no partial output is left behind

A cluster count is evidence for a person to review, not a fact.
`
