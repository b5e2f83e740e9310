package cliflags

import (
	"errors"
	"flag"
	"io"
	"slices"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/stream"
)

// TestTableFlags checks the lake table flags: their values reach Options.Tables, and bad or
// conflicting values are usage errors naming the flag.
func TestTableFlags(t *testing.T) {
	for _, tc := range []struct {
		args    []string
		want    string // "" = no error, else text the usage error must contain
		version int64  // -1: no version
		snap    int64
		where   []stream.KeyValue
		asFiles bool
	}{
		{nil, "", -1, 0, nil, false},
		{[]string{"--table-version", "0"}, "", 0, 0, nil, false},
		{[]string{"--table-version", "12", "--where", "day=2026-11-28", "--where", "region=north"}, "", 12, 0, []stream.KeyValue{{Key: "day", Value: "2026-11-28"}, {Key: "region", Value: "north"}}, false},
		{[]string{"--snapshot", "-4667818587742665528"}, "", -1, -4667818587742665528, nil, false},
		{[]string{"--as-files", "--where", "day=x"}, "", -1, 0, []stream.KeyValue{{Key: "day", Value: "x"}}, true},
		{[]string{"--table-version", "-1"}, "--table-version", 0, 0, nil, false},
		{[]string{"--table-version", "v3"}, "--table-version", 0, 0, nil, false},
		{[]string{"--snapshot", "0"}, "--snapshot", 0, 0, nil, false},
		{[]string{"--snapshot", "1", "--table-version", "1"}, "cannot be given together", 0, 0, nil, false},
		{[]string{"--as-files", "--snapshot", "1"}, "--as-files", 0, 0, nil, false},
		{[]string{"--where", "day"}, "--where", 0, 0, nil, false},
		{[]string{"--where", "day=1", "--where", "day=2"}, "--where", 0, 0, nil, false},
	} {
		fs := flag.NewFlagSet("t", flag.ContinueOnError)
		fs.SetOutput(io.Discard)
		var d Data
		d.Register(fs)
		if err := fs.Parse(tc.args); err != nil {
			t.Fatal(err)
		}
		o, err := d.Options()
		var ue *UsageError
		if tc.want != "" {
			if !errors.As(err, &ue) || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("%v: got %v, want a usage error naming %q", tc.args, err, tc.want)
			}
			continue
		}
		if err != nil {
			t.Errorf("%v: %v", tc.args, err)
			continue
		}
		tb := o.Tables
		gotV := int64(-1)
		if tb.Table.Version != nil {
			gotV = *tb.Table.Version
		}
		if gotV != tc.version || tb.Table.Snapshot != tc.snap || tb.AsFiles != tc.asFiles || !slices.Equal(tb.Table.Where, tc.where) {
			t.Errorf("%v: tables %+v (version %d)", tc.args, tb, gotV)
		}
	}
}
