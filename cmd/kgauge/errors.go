package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"regexp"
	"strings"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/internal/cliflags"
	"github.com/kgauge/kgauge/internal/errtext"
	"github.com/kgauge/kgauge/internal/exitcode"
	"github.com/kgauge/kgauge/stream"
)

// Exit codes (internal/exitcode, shared with cmd/kgauge-beam); the README and the usage text list them.
const (
	ExitOK          = exitcode.OK
	ExitInternal    = exitcode.Internal
	ExitUsage       = exitcode.Usage
	ExitInput       = exitcode.Input
	ExitOutput      = exitcode.Output
	ExitDrift       = exitcode.Drift // track: a newly profiled partition drifted
	ExitInterrupted = exitcode.Interrupted
)

// usageError is a problem with the command line.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }
func (e *usageError) ExitCode() int { return ExitUsage }

func usageErrorf(format string, args ...any) error {
	return &usageError{msg: fmt.Sprintf(format, args...)}
}

// outputError is a failure to write an output file.
type outputError struct{ err error }

func (e *outputError) Error() string { return e.err.Error() }
func (e *outputError) Unwrap() error { return e.err }
func (e *outputError) ExitCode() int { return ExitOutput }

// internalError is a failure that no input or flag should cause: a bug.
type internalError struct{ msg string }

func (e *internalError) Error() string { return e.msg }

// exitCode maps an error to the documented exit code (internal/exitcode).
func exitCode(err error) int { return exitcode.Of(err) }

// report prints err as one line and returns its exit code.
func report(err error, stderr io.Writer) int {
	code := exitCode(err)
	if err == nil || code == ExitOK {
		return code
	}
	msg := inert(errtext.Line(strings.ReplaceAll(err.Error(), "\n", "; ")))
	if errors.Is(err, stream.ErrUnreadableFile) {
		msg += " (--skip-unreadable skips such files and lists them)"
	}
	switch code {
	case ExitInterrupted:
		msg = "interrupted; no output written"
	case ExitInternal:
		msg = fmt.Sprintf("internal error (a bug in kgauge %s; please report it with the command line and this message): %s",
			kgauge.Version, msg)
	}
	if !strings.HasPrefix(msg, "kgauge") {
		msg = "kgauge: " + msg
	}
	if code == ExitUsage {
		msg += ` (see "kgauge --help" or "kgauge COMMAND --help")`
	}
	fmt.Fprintln(stderr, msg)
	return code
}

func versionString() string { return kgauge.Version }

// parseArgs parses args into fs in the GNU style: flags may come before and after the PATHs
// (fs.Args() returns the PATHs in order), "--" ends the flags, and -h or --help prints the
// command's usage (fs.Usage, written to fs.Output()) on stdout and comes back as flag.ErrHelp. Any
// other problem is a one-line usage error naming the command and the flag; nothing else is printed.
func parseArgs(fs *flag.FlagSet, args []string, stdout io.Writer) error {
	var flags, paths []string
	for i := 0; i < len(args); i++ {
		a := args[i]
		if a == "--" {
			paths = append(paths, args[i+1:]...)
			break
		}
		if len(a) < 2 || a[0] != '-' {
			paths = append(paths, a)
			continue
		}
		flags = append(flags, a)
		name := strings.TrimLeft(a, "-")
		if strings.Contains(name, "=") {
			continue
		}
		// A flag that takes a value takes the next argument, as flag.Parse would.
		if f := fs.Lookup(name); f != nil && !isBoolFlag(f) {
			if i+1 == len(args) {
				return usageErrorf("%s: --%s needs a value", fs.Name(), name)
			}
			i++
			flags = append(flags, args[i])
		}
	}
	fs.SetOutput(io.Discard)
	err := fs.Parse(append(append(flags, "--"), paths...))
	switch {
	case errors.Is(err, flag.ErrHelp):
		fs.SetOutput(stdout)
		fs.Usage()
		return err
	case err != nil:
		return usageErrorf("%s: %s%s", fs.Name(), flagMessage(err), rangeHint(err))
	}
	return checkRanges(fs)
}

// badValue finds the flag a parse error of the flag package names.
var badValue = regexp.MustCompile(`invalid value ".*" for flag -([a-z0-9-]+)`)

// rangeHint gives the range of the flag whose value did not parse, if it has one.
func rangeHint(err error) string {
	if m := badValue.FindStringSubmatch(err.Error()); m != nil {
		if r, ok := cliflags.Ranges[m[1]]; ok {
			return fmt.Sprintf(" (--%s must be %s)", m[1], r)
		}
	}
	return ""
}

// checkRanges checks every numeric flag of fs against its documented range (cliflags.Ranges),
// right after parsing and before any file is opened.
func checkRanges(fs *flag.FlagSet) error {
	if err := cliflags.CheckRanges(fs); err != nil {
		return usageErrorf("%s: %v", fs.Name(), err)
	}
	return nil
}

// flagMessage words the flag package's parse errors in the user's terms, with the flags spelt
// --name as the help and the README spell them.
func flagMessage(err error) string {
	msg := err.Error()
	for _, r := range flagMessages {
		if m := r.re.FindStringSubmatch(msg); m != nil {
			return r.re.ReplaceAllString(msg, r.with)
		}
	}
	return msg
}

var flagMessages = []struct {
	re   *regexp.Regexp
	with string
}{
	{regexp.MustCompile(`^flag provided but not defined: -+(.*)$`), "unknown flag --$1"},
	{regexp.MustCompile(`^flag needs an argument: -+(.*)$`), "--$1 needs a value"},
	{regexp.MustCompile(`^invalid value (".*") for flag -+([^:]*): (.*)$`), "--$2: invalid value $1: $3"},
	{regexp.MustCompile(`^invalid boolean value (".*") for -+([^:]*): (.*)$`), "--$2: invalid value $1: $3"},
}

func isBoolFlag(f *flag.Flag) bool {
	b, ok := f.Value.(interface{ IsBoolFlag() bool })
	return ok && b.IsBoolFlag()
}

// printFlags lists the flags of fs on its output in the spelling the commands accept and the
// README uses (--name), with the value's kind, its default and its meaning.
func printFlags(fs *flag.FlagSet) {
	w := fs.Output()
	fs.VisitAll(func(f *flag.Flag) {
		kind, usage := flag.UnquoteUsage(f)
		line := "  --" + f.Name
		if kind != "" {
			line += " " + strings.ToUpper(kind)
		}
		fmt.Fprintln(w, line)
		def := ""
		if f.DefValue != "" && f.DefValue != "0" && f.DefValue != "false" {
			def = fmt.Sprintf(" (default %s)", f.DefValue)
		}
		fmt.Fprintf(w, "        %s%s\n", usage, def)
	})
}
