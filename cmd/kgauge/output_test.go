package main

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"unicode/utf8"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/ledger"
)

// TestColumnFormat: every value of a column is printed in one format, with sigDigits significant
// digits for the largest: plain decimals in [1e-3, 1e6), scientific notation outside (never a mix
// such as 89890 beside 1.0245e+05).
func TestColumnFormat(t *testing.T) {
	cases := []struct {
		name string
		vals []float64
		want []string
	}{
		{"Shares", []float64{0.4128, 0.05, math.NaN()}, []string{"0.4128", "0.0500", "-"}},
		{"Mixed", []float64{89890, 102450, 9.5}, []string{"89890", "102450", "10"}},
		{"Large", []float64{2.79647e7, 2.87e7, 616703}, []string{"2.796e7", "2.870e7", "6.167e5"}},
		{"NegativeLarge", []float64{-1.34798e6, 879713}, []string{"-1.348e6", "8.797e5"}},
		{"Tiny", []float64{2.5e-5, -1e-6}, []string{"2.500e-5", "-1.000e-6"}},
		{"RoundsUp", []float64{9.99996, 1}, []string{"10.00", "1.00"}},
		{"Gap", []float64{1.357, 2.506, -0.12}, []string{"1.357", "2.506", "-0.120"}},
		{"Zeros", []float64{0, 0}, []string{"0.000", "0.000"}},
		{"NoNegativeZero", []float64{-0.00001, 1}, []string{"0.000", "1.000"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			f := columnFormat(tc.vals)
			for i, v := range tc.vals {
				if got := f.format(v); got != tc.want[i] {
					t.Errorf("%g: %q, want %q", v, got, tc.want[i])
				}
			}
		})
	}
}

// syntheticResult is a result whose scores span the magnitudes real runs give (and worse), for the
// layout tests.
func syntheticResult(k int, scale float64) *kgauge.Result {
	res := &kgauge.Result{K: 3, Agreement: 0.4545, Confidence: 0.5, Votes: map[string]*int{}, Files: []kgauge.FileInfo{{Path: "a.parquet"}},
		Columns: []string{"x", "y"}, MinK: 1, MaxK: k}
	for i := 1; i <= k; i++ {
		f := float64(i)
		res.PerK = append(res.PerK, criteria.Scores{K: i, WCSS: -scale * 1.2345678 / f, Silhouette: -0.123456, SilhouetteLo: -0.2, SilhouetteHi: -0.1,
			SimplifiedSilhouette: -0.98765, GapBox: -12.3456, GapBoxS: 0.0123, GapPCA: -11.2, GapPCAS: 0.2,
			BICGMM: -scale * 9.87654321 * f, AICGMM: -scale * 8.7654 * f, BICKMeans: -scale * 7.654 * f, WardJump: 123.456,
			CalinskiHarabasz: scale * 1.5 * f, DaviesBouldin: 12.3456})
	}
	for _, c := range tableColumns {
		v := min(3, k)
		res.Votes[c.crit] = &v
	}
	return res
}

// TestTableFitsTerminal: the default per-k table is at most 120 characters wide whatever the
// magnitudes and the k range; --wide adds the intervals.
func TestTableFitsTerminal(t *testing.T) {
	for _, scale := range []float64{1, 1e5, 1e12, 1e-7} {
		for _, wide := range []bool{false, true} {
			var b strings.Builder
			if err := writeTable(&b, syntheticResult(30, scale), wide); err != nil {
				t.Fatal(err)
			}
			table := perKTable(b.String())
			if len(table) != 32 {
				t.Fatalf("scale %g: %d table lines, want 2 header lines and 30 rows:\n%s", scale, len(table), b.String())
			}
			widest := 0
			for _, line := range table {
				widest = max(widest, utf8.RuneCountInString(line))
			}
			hasCI := strings.Contains(table[1], "(95% CI)") && strings.Contains(table[2], "±")
			switch {
			case !wide && widest > 120:
				t.Errorf("scale %g: the default table is %d characters wide, more than 120:\n%s", scale, widest, strings.Join(table, "\n"))
			case !wide && hasCI:
				t.Errorf("scale %g: the default table shows intervals", scale)
			case wide && !hasCI:
				t.Errorf("scale %g: --wide lacks the intervals:\n%s", scale, strings.Join(table, "\n"))
			}
		}
	}
}

// perKTable returns the lines of the per-k table of a text result: from the first blank line to
// the next.
func perKTable(out string) []string {
	lines := strings.Split(out, "\n")
	start := -1
	for i, l := range lines {
		if l == "" {
			if start >= 0 {
				return lines[start:i]
			}
			start = i + 1
		}
	}
	return nil
}

// TestAgreementSameEverywhere: estimate's text, track's text and the JSON give agreement and
// confidence as the same share of 0..1 with two decimals (as --min-agreement takes it).
func TestAgreementSameEverywhere(t *testing.T) {
	var b strings.Builder
	if err := writeTable(&b, syntheticResult(5, 1), false); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), "agreement 0.45") || !strings.Contains(b.String(), "confidence 0.50") || strings.Contains(b.String(), "%·") {
		t.Errorf("estimate's verdict line does not give agreement 0.45 and confidence 0.50:\n%s", b.String())
	}
	line := recordLine(ledger.Record{Partition: "day=2026-11-28", Status: ledger.StatusDone, K: 3, Agreement: 0.4545})
	if !strings.Contains(line, "agreement 0.45") {
		t.Errorf("track's line %q does not give agreement 0.45", line)
	}
}

// TestInputsNamed: the first line counts files and saved sketches in words, never "0 file(s)".
func TestInputsNamed(t *testing.T) {
	cases := []struct {
		files, sketches int
		want            string
	}{
		{1, 0, " · 1 file · "}, {3, 0, " · 3 files · "}, {0, 2, " · 2 saved sketches · "}, {2, 1, " · 2 files and 1 saved sketch · "},
	}
	for _, tc := range cases {
		res := syntheticResult(3, 1)
		res.Files = make([]kgauge.FileInfo, tc.files)
		res.Sketches = make([]string, tc.sketches)
		var b strings.Builder
		writeTable(&b, res, false)
		first, _, _ := strings.Cut(b.String(), "\n")
		if !strings.Contains(first, tc.want) || strings.Contains(first, "(s)") {
			t.Errorf("%d files, %d sketches: %q, want %q in it", tc.files, tc.sketches, first, tc.want)
		}
	}
}

// TestMessagesInUserTerms: errors a user meets name the file, the column or the flag in one line,
// without package prefixes or repeated words.
func TestMessagesInUserTerms(t *testing.T) {
	dir := lake(t, smallLoads())
	cases := []struct {
		name  string
		args  []string
		code  int
		wants []string
	}{
		{"StringColumn", []string{"estimate", "--columns", "h00,tariff", dir}, 3, []string{`column "tariff"`, "column is not numeric: its type is string"}},
		{"Missing", []string{"estimate", filepath.Join(dir, "nope")}, 3, []string{"nope"}},
		{"BadFlag", []string{"estimate", "--max-k", "x", dir}, 2, []string{"--max-k"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			code, _, errs := run(t, append(tc.args[:1], append(append([]string{}, quickFlags...), tc.args[1:]...)...)...)
			msg := strings.TrimSpace(errs)
			if code != tc.code || strings.Count(msg, "\n") != 0 {
				t.Fatalf("exit %d, %q; want exit %d and one line", code, errs, tc.code)
			}
			for _, w := range tc.wants {
				if !strings.Contains(msg, w) {
					t.Errorf("%q lacks %q", msg, w)
				}
			}
			for _, bad := range []string{"stream:", "criteria:", "sketch:", "(not numeric)"} {
				if strings.Contains(msg, bad) {
					t.Errorf("%q holds %q", msg, bad)
				}
			}
		})
	}
}

// failingWriter fails every write as a full disk does.
type failingWriter struct{}

func (failingWriter) Write([]byte) (int, error) { return 0, syscall.ENOSPC }

// tinyInput writes a small file of three clusters (invented data) for tests that need a quick run.
func tinyInput(t *testing.T) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "blobs.parquet")
	x, y := threeBlobs(300, 1)
	xyParquet(t, p, x, y, math.NaN())
	return p
}

// tinyFlags keep the runs on tinyInput short.
var tinyFlags = []string{"--quiet", "--max-k", "4", "--workers", "1"}

// TestStdoutFailureExit4: a result that cannot be written to stdout is an output failure (exit 4)
// naming stdout, for the table and JSON, through Run and in a process whose stdout is /dev/full
// (this test binary re-run as the command, as main runs it).
func TestStdoutFailureExit4(t *testing.T) {
	if os.Getenv("KGAUGE_TEST_AS_MAIN") == "1" {
		os.Exit(Run(context.Background(), strings.Split(os.Getenv("KGAUGE_TEST_ARGS"), "\x1f"), os.Stdout, os.Stderr))
	}
	in := tinyInput(t)
	for _, asJSON := range []bool{false, true} {
		args := append(append([]string{"estimate"}, tinyFlags...), in)
		if asJSON {
			args = append(args, "--json")
		}
		var errs strings.Builder
		code := Run(t.Context(), args, failingWriter{}, &errs)
		if code != ExitOutput || !strings.Contains(errs.String(), "stdout") || strings.Count(errs.String(), "\n") != 1 {
			t.Errorf("json %v: exit %d, %q; want 4 and one line naming stdout", asJSON, code, errs.String())
		}
	}
	full, err := os.OpenFile("/dev/full", os.O_WRONLY, 0)
	if err != nil {
		t.Skip("no /dev/full:", err)
	}
	defer full.Close()
	cmd := exec.Command(os.Args[0], "-test.run=^TestStdoutFailureExit4$")
	cmd.Env = append(os.Environ(), "KGAUGE_TEST_AS_MAIN=1",
		"KGAUGE_TEST_ARGS="+strings.Join(append(append([]string{"estimate"}, tinyFlags...), in), "\x1f"))
	cmd.Stdout = full
	var stderr strings.Builder
	cmd.Stderr = &stderr
	err = cmd.Run()
	var ee *exec.ExitError
	if !errors.As(err, &ee) || ee.ExitCode() != ExitOutput || !strings.Contains(stderr.String(), "stdout") {
		t.Errorf("kgauge estimate > /dev/full: %v, %q; want exit 4 naming stdout", err, stderr.String())
	}
}

// TestJSONKeysAlwaysPresent: the documented keys are present, null or empty where they do not
// apply, in a result from data files and in one from saved sketches alone (the full contract over
// every input kind, Beam's included, is beam's TestJSONContract).
func TestJSONKeysAlwaysPresent(t *testing.T) {
	in := tinyInput(t)
	sk := filepath.Join(t.TempDir(), "a.kgs")
	code, out, errs := run(t, append(append([]string{"estimate", "--json", "--save-sketch", sk}, tinyFlags...), in)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	code, outSk, errs := run(t, append(append([]string{"estimate", "--json"}, tinyFlags...), sk)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	for name, js := range map[string]string{"data": out, "sketch": outSk} {
		var m map[string]any
		if err := json.Unmarshal([]byte(js), &m); err != nil {
			t.Fatal(err)
		}
		for _, key := range []string{"throughput", "projection", "sketches", "files", "tables", "skipped_files", "why_runner_up", "ignored_columns"} {
			if _, ok := m[key]; !ok {
				t.Errorf("%s: JSON lacks %q", name, key)
			}
		}
		if name == "sketch" && (m["throughput"] != nil || m["projection"] != nil) {
			t.Errorf("sketch: throughput %v projection %v, want null (no pass)", m["throughput"], m["projection"])
		}
		if name == "data" && (m["throughput"] == nil || m["projection"] == nil) {
			t.Errorf("data: throughput %v projection %v, want values", m["throughput"], m["projection"])
		}
	}
}
