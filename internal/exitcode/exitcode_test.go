package exitcode

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"testing"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/stream"
)

type coded struct{ code int }

func (c coded) Error() string { return "coded" }
func (c coded) ExitCode() int { return c.code }

// TestOf: each class of error gets the documented code, also when wrapped.
func TestOf(t *testing.T) {
	wrap := func(err error) error { return fmt.Errorf("reading x.parquet: %w", err) }
	for _, tc := range []struct {
		name string
		err  error
		want int
	}{
		{"nil", nil, OK},
		{"help", flag.ErrHelp, OK},
		{"interrupted", wrap(context.Canceled), Interrupted},
		{"usage error of a command", wrap(coded{Usage}), Usage},
		{"output error of a command", wrap(coded{Output}), Output},
		{"memory bound", wrap(kgauge.ErrMemoryLimit), Usage},
		{"same data twice", wrap(kgauge.ErrSameData), Usage},
		{"missing file", wrap(os.ErrNotExist), Input},
		{"too few rows", wrap(kgauge.ErrTooFewRows), Input},
		{"too wide", wrap(kgauge.ErrTooWide), Input},
		{"unknown column", wrap(stream.ErrUnknownColumn), Input},
		{"unreadable file", wrap(stream.ErrUnreadableFile), Input},
		{"input error", &kgauge.InputError{Path: "a.kgs", Err: errors.New("bad")}, Input},
		{"anything else", errors.New("index out of range"), Internal},
	} {
		if got := Of(tc.err); got != tc.want {
			t.Errorf("%s: Of(%v) = %d, want %d", tc.name, tc.err, got, tc.want)
		}
	}
}
