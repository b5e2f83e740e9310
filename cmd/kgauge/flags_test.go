package main

import (
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/internal/cliflags"
)

// numericFlags parses a command's -h output (flag.PrintDefaults) into its numeric flags and their
// type names (int, uint, float, duration).
func numericFlags(t *testing.T, command string) map[string]string {
	t.Helper()
	code, help, _ := run(t, command, "-h")
	if code != ExitOK {
		t.Fatalf("%s -h: exit %d", command, code)
	}
	flags := map[string]string{}
	for _, m := range regexp.MustCompile(`(?m)^  --([a-z0-9-]+) (INT|UINT|FLOAT|DURATION)$`).FindAllStringSubmatch(help, -1) {
		flags[m[1]] = strings.ToLower(m[2])
	}
	if len(flags) == 0 {
		t.Fatalf("%s -h lists no numeric flag:\n%s", command, help)
	}
	return flags
}

// TestFlagRanges walks every numeric flag of every command with 0, -1, a huge value and a
// non-number. A value outside the flag's documented range (cliflags.Ranges, listed in the README)
// is a usage error (exit 2) naming the flag and the range, reported before any file is opened: the
// inputs here do not exist (or the output cannot be written), so a value that passed the check
// gets exit 3 or 4 instead. Nothing exits 0 or 1. Before issue 14, --restarts 1000000 and
// --gap-refs 100000 ran for minutes and --memory 99999999999TiB overflowed.
func TestFlagRanges(t *testing.T) {
	dir := t.TempDir()
	missing := filepath.Join(dir, "missing.parquet")
	t.Setenv("TMPDIR", filepath.Join(dir, "no-such-tmp")) // demo's lake cannot be written: exit 4
	base := map[string][]string{
		"estimate": {missing},
		"plan":     {missing},
		"track":    {filepath.Join(dir, "no-lake"), "--ledger", filepath.Join(dir, "l.jsonl")},
		"synth":    {"--out", "/dev/null/lake"},
		"demo":     nil,
	}
	readme, err := os.ReadFile("../../README.md")
	if err != nil {
		t.Fatal(err)
	}
	walked := 0
	for command, tail := range base {
		for name, typ := range numericFlags(t, command) {
			walked++
			r, ok := cliflags.Ranges[name]
			if !ok {
				t.Errorf("%s --%s has no documented range in cliflags.Ranges", command, name)
				continue
			}
			if !strings.Contains(string(readme), "| `--"+name+"` | "+r.String()) {
				t.Errorf("README does not document --%s with its range %s", name, r)
			}
			huge := map[string]string{"int": "2000000000", "uint": "99999999999999999999", "float": "1e300", "duration": "100000h"}[typ]
			for _, v := range []string{"0", "-1", huge, "abc"} {
				args := append([]string{command, "--" + name, v}, tail...)
				if command != "synth" {
					args = append([]string{command, "--quiet"}, args[1:]...)
				}
				code, out, errs := run(t, args...)
				n, perr := strconv.ParseFloat(v, 64)
				if typ == "duration" && v == "0" {
					perr = nil
				}
				in := perr == nil && n >= r.Min && n <= r.Max
				if typ == "uint" && v == huge {
					in = false // beyond uint64: the flag package refuses it
				}
				switch {
				case code == ExitOK || code == ExitInternal:
					t.Errorf("%v: exit %d: %s", args, code, errs)
				case !in && (code != ExitUsage || !strings.Contains(errs, "-"+name)):
					t.Errorf("%v: exit %d, stderr %q; want exit 2 naming --%s", args, code, errs, name)
				case !in && v != "abc" && !strings.Contains(errs, r.String()):
					t.Errorf("%v: stderr %q does not give the range %s", args, errs, r)
				case in && code == ExitUsage:
					t.Errorf("%v: a value in range %s was refused: %s", args, r, errs)
				case out != "":
					t.Errorf("%v: stdout %q", args, out)
				}
			}
		}
	}
	// Every command has several numeric flags (72 in all when this was written).
	if walked < 60 {
		t.Errorf("walked %d numeric flags; the -h output was not parsed", walked)
	}
	t.Logf("walked %d numeric flags of %d commands", walked, len(base))
	if !strings.Contains(string(readme), "| `--memory` | 1MiB to 1PiB |") {
		t.Error("README does not document the range of --memory")
	}
	for _, v := range []string{"0", "-1", "99999999999TiB", "abc", "1KiB"} {
		code, _, errs := run(t, "estimate", "--memory", v, missing)
		if code != ExitUsage || !strings.Contains(errs, "--memory") {
			t.Errorf("--memory %s: exit %d, stderr %q; want exit 2 naming --memory", v, code, errs)
		}
	}
}
