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
