package main

import (
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/stream/lake/laketest"
)

// TestTableFlagsCLI checks the lake table flags end to end: the text and JSON name the table
// state, time travel and filters reach the reader, and refused tables and bad values exit with
// the bad-input and usage codes and one line naming the problem.
func TestTableFlagsCLI(t *testing.T) {
	root := filepath.Join(t.TempDir(), "sales")
	laketest.SalesTable(t, root)
	small := []string{"--columns", "x,y", "--max-k", "3", "--coreset", "200", "--gap-refs", "2", "--gap-sample", "100", "--anchors", "50", "--quiet"}
	args := func(extra ...string) []string { return append(append([]string{"estimate"}, small...), extra...) }

	code, out, errs := run(t, args(root)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if want := "delta table " + root + " version 4: 2 of 6 stored data files live, 14 rows deleted\n"; !strings.Contains(out, want) {
		t.Errorf("text output lacks %q:\n%s", want, out)
	}

	code, out, errs = run(t, args("--json", "--table-version", "3", "--where", "day=2026-11-28", root)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var res struct {
		Rows   int64 `json:"rows"`
		Tables []struct {
			Format    string `json:"format"`
			Version   *int64 `json:"version"`
			LiveFiles int    `json:"live_files"`
			Where     string `json:"where"`
		} `json:"tables"`
	}
	if err := json.Unmarshal([]byte(out), &res); err != nil {
		t.Fatal(err)
	}
	if len(res.Tables) != 1 || res.Tables[0].Format != "delta" || res.Tables[0].Version == nil || *res.Tables[0].Version != 3 ||
		res.Tables[0].LiveFiles != 1 || res.Tables[0].Where != "day=2026-11-28" || res.Rows != 160 {
		t.Errorf("JSON: %d rows, tables %+v; want 160 rows of version 3, one live file, where day=2026-11-28", res.Rows, res.Tables)
	}

	for _, tc := range []struct {
		args []string
		code int
		want string
	}{
		{args("--table-version", "9", root), 3, "version 9 does not exist (latest is 4)"},
		{args("--snapshot", "7", root), 3, "--snapshot is for Iceberg tables"},
		{args("--where", "day=2026-12-01", root), 3, "no data file's partition matches the filter day=2026-12-01"},
		{args("--table-version", "-2", root), 2, "--table-version"},
		{args("--as-files", "--table-version", "2", root), 2, "--as-files"},
	} {
		code, _, errs := run(t, tc.args...)
		first, _, _ := strings.Cut(errs, "\n") // usage errors add a line pointing at the help
		if code != tc.code || !strings.Contains(first, tc.want) || code == 3 && strings.Count(strings.TrimSpace(errs), "\n") > 0 {
			t.Errorf("%v: exit %d, stderr %q; want exit %d and an error line with %q", tc.args[len(tc.args)-3:], code, errs, tc.code, tc.want)
		}
	}
}

// TestSynthDeltaTrack checks `synth --delta` and `track` over the table it writes: each run is the
// next version of a table the reader accepts (an overwritten day's earlier file stays on disk and
// leaves the table), the estimate over a version equals the estimate over exactly the files live
// in it, and track profiles a new day and a day a later version overwrote, naming the version.
func TestSynthDeltaTrack(t *testing.T) {
	dir := t.TempDir()
	root := filepath.Join(dir, "sales")
	small := []string{"--rows", "1500", "--row-group", "500", "--seed", "3"}
	for _, extra := range [][]string{{"--partitions", "2"}, {"--start", "2026-11-29", "--heat-wave", "0.3"}, {"--start", "2026-11-30"}} {
		if code, _, errs := run(t, append(append([]string{"synth", "--delta", "--out", root}, small...), extra...)...); code != 0 {
			t.Fatalf("synth %v: exit %d: %s", extra, code, errs)
		}
	}
	if code, _, errs := run(t, "synth", "--delta", "--format", "arrow", "--out", root); code != 2 || !strings.Contains(errs, "--delta") {
		t.Errorf("synth --delta --format arrow: exit %d, %q; want a usage error naming --delta", code, errs)
	}
	est := []string{"--columns", "h07,h08,h18,h19", "--max-k", "3", "--coreset", "300", "--gap-refs", "2", "--gap-sample", "100", "--anchors", "50", "--quiet", "--json"}
	estimate := func(extra ...string) map[string]any {
		t.Helper()
		code, out, errs := run(t, append(append([]string{"estimate"}, est...), extra...)...)
		if code != 0 {
			t.Fatalf("estimate %v: exit %d: %s", extra, code, errs)
		}
		m := stripTimings(t, out)
		delete(m, "tables")
		for _, f := range m["files"].([]any) {
			delete(f.(map[string]any), "partition")
		}
		return m
	}
	for _, c := range []struct {
		version string
		live    []string
	}{
		{"0", []string{"day=2026-11-28/part-000.parquet", "day=2026-11-29/part-000.parquet"}},
		{"2", []string{"day=2026-11-28/part-000.parquet", "day=2026-11-29/part-001.parquet", "day=2026-11-30/part-000.parquet"}},
	} {
		var list []string
		for _, rel := range c.live {
			list = append(list, filepath.Join(root, filepath.FromSlash(rel)))
		}
		got, want := estimate("--table-version", c.version, root), estimate(list...)
		g, _ := json.Marshal(got)
		w, _ := json.Marshal(want)
		if string(g) != string(w) {
			t.Errorf("version %s: the table's estimate differs from its live files':\n%s\nwant\n%s", c.version, g, w)
		}
	}

	ledger := filepath.Join(dir, "sales.jsonl")
	trackArgs := []string{"track", root, "--ledger", ledger, "--columns", "h07,h08,h18,h19", "--max-k", "3", "--coreset", "300", "--gap-refs", "2", "--gap-sample", "100", "--anchors", "50", "--min-agreement", "0"}
	code, out, errs := run(t, trackArgs...)
	if code != 0 || strings.Count(out, "\n") != 3 || !strings.Contains(out, "day=2026-11-29  k ") || !strings.Contains(out, "delta version 2") {
		t.Fatalf("track over version 2: exit %d, %q, %s; want three days at version 2", code, out, errs)
	}
	if code, _, errs := run(t, append([]string{"synth", "--delta", "--out", root, "--start", "2026-11-28", "--partitions", "1"}, small...)...); code != 0 {
		t.Fatalf("synth overwriting day 28: exit %d: %s", code, errs)
	}
	code, out, errs = run(t, trackArgs...)
	if code != 0 || strings.Count(out, "\n") != 1 || !strings.HasPrefix(out, "day=2026-11-28  k ") || !strings.Contains(out, "delta version 3") ||
		!strings.Contains(errs, "1 of them changed by the table since their record") {
		t.Errorf("track after day 28 was overwritten: exit %d, %q, %q; want day 28 alone, at version 3", code, out, errs)
	}
}
