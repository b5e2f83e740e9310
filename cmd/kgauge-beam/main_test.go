package main

import (
	"bytes"
	"context"
	"flag"
	"path/filepath"
	"strings"
	"testing"
)

// TestBadInvocations checks that mistakes found before the pipeline starts are one-line errors with
// the documented exit codes, naming the flag or the path; none of these cases starts a runner.
func TestBadInvocations(t *testing.T) {
	missing := filepath.Join(t.TempDir(), "nothing-here")
	for _, tc := range []struct {
		name string
		args []string
		code int
		want string
	}{
		{"no path", nil, exitUsage, "no PATH"},
		{"max-k zero", []string{"--max-k", "0", "x"}, exitUsage, "--max-k"},
		{"bad scale", []string{"--scale", "cubic", "x"}, exitUsage, "--scale"},
		{"bad memory", []string{"--memory", "lots", "x"}, exitUsage, "--memory"},
		{"empty columns", []string{"--columns", " , ", "x"}, exitUsage, "--columns"},
		{"missing input", []string{missing}, exitInput, missing},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var f flags
			fs := flag.NewFlagSet("kgauge-beam", flag.ContinueOnError)
			f.register(fs)
			if err := fs.Parse(tc.args); err != nil {
				t.Fatal(err)
			}
			var out, errs bytes.Buffer
			code := report(run(context.Background(), &f, fs.Args(), &out), &errs)
			msg := errs.String()
			if code != tc.code || !strings.Contains(msg, tc.want) || strings.Count(msg, "\n") != 1 || out.Len() != 0 {
				t.Errorf("exit %d, stderr %q, stdout %d bytes; want exit %d and one line naming %q", code, msg, out.Len(), tc.code, tc.want)
			}
		})
	}
}
