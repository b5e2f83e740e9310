// Command kgauge estimates the number of clusters k in Parquet and Arrow IPC files too large for
// memory, in one streaming pass. Run "kgauge help" for the commands.
package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := Run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// Run executes one kgauge command with the given arguments and streams and returns the exit code.
func Run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
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
  1    internal error
  2    usage: unknown command or flag, bad flag value; an output that is an input
  3    bad input: missing, unreadable or invalid file; column problems; too few usable rows;
       track: a partition failed, is incomplete or quarantined
  4    an output file could not be written
  5    track: a newly profiled partition drifted (see the ledger's drift reasons)
  130  interrupted (SIGINT or SIGTERM); no partial output is left behind

A cluster count is evidence for a person to review, not a fact.
`
