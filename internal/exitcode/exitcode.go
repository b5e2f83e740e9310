// Package exitcode is the one map from errors to the documented exit codes, shared by cmd/kgauge
// and cmd/kgauge-beam so that the two cannot drift apart: 0 ok, 1 a bug, 2 usage, 3 bad input,
// 4 an output not written, 5 drift (track), 130 interrupted.
package exitcode

import (
	"context"
	"errors"
	"flag"
	"os"
	"syscall"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/stream"
)

// The exit codes; the README lists them.
const (
	OK          = 0
	Internal    = 1
	Usage       = 2
	Input       = 3
	Output      = 4
	Drift       = 5 // track: a newly profiled partition drifted
	Interrupted = 130
)

// Coder is an error that carries its own exit code (a command's usage or output error).
type Coder interface {
	error
	ExitCode() int
}

// Of maps err to its exit code: nil and --help are 0; a cancelled context (SIGINT, SIGTERM) 130;
// an error carrying a code (Coder) that code; a --memory bound too small and the same data named
// twice 2 (the command line is wrong); every bad-input error of the library and of stream 3
// (missing, unreadable, not data, bad columns, too few rows, values it cannot represent);
// anything else 1, a bug.
func Of(err error) int {
	var c Coder
	var re *stream.ReadError
	var ie *kgauge.InputError
	switch {
	case err == nil, errors.Is(err, flag.ErrHelp):
		return OK
	case errors.Is(err, context.Canceled):
		return Interrupted
	case errors.As(err, &c):
		return c.ExitCode()
	case errors.Is(err, kgauge.ErrMemoryLimit), errors.Is(err, kgauge.ErrSameData):
		return Usage
	case errors.As(err, &re), errors.As(err, &ie),
		errors.Is(err, kgauge.ErrNoRows), errors.Is(err, kgauge.ErrTooFewRows), errors.Is(err, kgauge.ErrNonPositive),
		errors.Is(err, kgauge.ErrUnrepresentable), errors.Is(err, kgauge.ErrTooWide),
		errors.Is(err, os.ErrNotExist), errors.Is(err, os.ErrPermission),
		errors.Is(err, syscall.EISDIR), errors.Is(err, syscall.ENOTDIR), // a file named where a directory is, or the reverse
		errors.Is(err, stream.ErrNoDataFiles), errors.Is(err, stream.ErrNotRegular), errors.Is(err, stream.ErrNoNumericColumns),
		errors.Is(err, stream.ErrUnknownColumn), errors.Is(err, stream.ErrNotNumeric),
		errors.Is(err, stream.ErrMissingColumn), errors.Is(err, stream.ErrInfinite),
		errors.Is(err, stream.ErrUnreadableFile), errors.Is(err, stream.ErrDuplicateColumn):
		return Input
	}
	return Internal
}
