package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"regexp"
	"strings"
	"syscall"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/internal/cliflags"
	"github.com/kgauge/kgauge/stream"
)

// Exit codes; the README and the usage text list them.
const (
	ExitOK          = 0
	ExitInternal    = 1
	ExitUsage       = 2
	ExitInput       = 3
	ExitOutput      = 4
	ExitDrift       = 5 // track: a newly profiled partition drifted
	ExitInterrupted = 130
)

// usageError is a problem with the command line.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

func usageErrorf(format string, args ...any) error {
	return &usageError{msg: fmt.Sprintf(format, args...)}
}

// outputError is a failure to write an output file.
type outputError struct{ err error }

func (e *outputError) Error() string { return e.err.Error() }
func (e *outputError) Unwrap() error { return e.err }

// internalError is a failure that no input or flag should cause: a bug.
type internalError struct{ msg string }

func (e *internalError) Error() string { return e.msg }

// exitCode maps an error to the documented exit code.
func exitCode(err error) int {
	var ue *usageError
	var oe *outputError
	var re *stream.ReadError
	var ie *kgauge.InputError
	switch {
	case err == nil:
		return ExitOK
	case errors.Is(err, flag.ErrHelp):
		return ExitOK
	case errors.Is(err, context.Canceled):
		return ExitInterrupted
	case errors.As(err, &ue), errors.Is(err, kgauge.ErrMemoryLimit):
		return ExitUsage
	case errors.As(err, &oe):
		return ExitOutput
	case errors.As(err, &re), errors.As(err, &ie),
		errors.Is(err, kgauge.ErrNoRows), errors.Is(err, kgauge.ErrTooFewRows),
		errors.Is(err, kgauge.ErrUnrepresentable), errors.Is(err, kgauge.ErrTooWide),
		errors.Is(err, os.ErrNotExist), errors.Is(err, os.ErrPermission),
		errors.Is(err, syscall.EISDIR), errors.Is(err, syscall.ENOTDIR), // a file named where a directory is, or the reverse
		errors.Is(err, stream.ErrNoDataFiles), errors.Is(err, stream.ErrNotRegular), errors.Is(err, stream.ErrNoNumericColumns),
		errors.Is(err, stream.ErrUnknownColumn), errors.Is(err, stream.ErrNotNumeric),
		errors.Is(err, stream.ErrMissingColumn), errors.Is(err, stream.ErrInfinite):
		return ExitInput
	}
	return ExitInternal
}

// report prints err as one line and returns its exit code.
func report(err error, stderr io.Writer) int {
	code := exitCode(err)
	if err == nil || code == ExitOK {
		return code
	}
	msg := strings.ReplaceAll(err.Error(), "\n", "; ")
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
	fmt.Fprintln(stderr, msg)
	if code == ExitUsage {
		fmt.Fprintln(stderr, `Try "kgauge help" or "kgauge COMMAND -h".`)
	}
	return code
}

func versionString() string { return kgauge.Version }

// parseArgs parses args into fs: -h comes back as flag.ErrHelp, any other problem as a usage
// error prefixed with the command's name.
func parseArgs(fs *flag.FlagSet, args []string) error {
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return err
		}
		return usageErrorf("%s: %v%s", fs.Name(), err, rangeHint(err))
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
