package main

import (
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"
)

// TestWideInputReduced checks that an input of more than 64 columns is estimated on its leading
// principal components and says so, in the text and in the JSON, with the dimension
// sketch/reduce's rule gives (⌈4/0.5⌉ = 8 at --max-k 4); that --reduce off and --reduce N are obeyed and
// give the same result on every run; and that a bad --reduce is a usage error naming the flag.
func TestWideInputReduced(t *testing.T) {
	path := filepath.Join(t.TempDir(), "wide.parquet")
	wideParquet(t, path, 100, 300)
	base := []string{"estimate", "--quiet", "--max-k", "4", "--coreset", "200", "--gap-refs", "2", "--gap-sample", "100", "--anchors", "50", "--workers", "1", path}
	code, out, errs := run(t, base...)
	if code != ExitOK || !strings.Contains(out, "reduced: the criteria ran in 8 dimensions, the leading principal components of the 100 columns") {
		t.Fatalf("text: exit %d, %s\n%s", code, errs, out)
	}
	for _, c := range []struct {
		reduce string
		to     int // 0: no reduction
	}{{"auto", 8}, {"12", 12}, {"off", 0}, {"500", 0}} {
		var res struct {
			K         int `json:"k"`
			Reduction *struct {
				Method string `json:"method"`
				From   int    `json:"from"`
				To     int    `json:"to"`
			} `json:"reduction"`
		}
		var outs [2]string
		for i := range outs {
			code, outs[i], errs = run(t, append(base, "--json", "--reduce", c.reduce)...)
			if code != ExitOK {
				t.Fatalf("--reduce %s: exit %d, %s", c.reduce, code, errs)
			}
		}
		if err := json.Unmarshal([]byte(outs[0]), &res); err != nil {
			t.Fatal(err)
		}
		switch {
		case c.to == 0 && res.Reduction != nil:
			t.Errorf("--reduce %s: reduction %+v, want none", c.reduce, res.Reduction)
		case c.to > 0 && (res.Reduction == nil || res.Reduction.To != c.to || res.Reduction.From != 100 || res.Reduction.Method != "principal_components"):
			t.Errorf("--reduce %s: reduction %+v, want 100 columns to %d dimensions", c.reduce, res.Reduction, c.to)
		}
		a, b := stripTimings(t, outs[0]), stripTimings(t, outs[1])
		ja, _ := json.Marshal(a)
		jb, _ := json.Marshal(b)
		if string(ja) != string(jb) {
			t.Errorf("--reduce %s: two runs differ", c.reduce)
		}
	}
	for _, bad := range []string{"1", "x", "-3", "1001"} {
		code, _, errs := run(t, append(base, "--reduce", bad)...)
		if code != ExitUsage || !strings.Contains(errs, "--reduce") {
			t.Errorf("--reduce %s: exit %d, %q; want a usage error naming --reduce", bad, code, errs)
		}
	}
}
