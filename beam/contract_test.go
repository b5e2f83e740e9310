package beam

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/sketch"
)

// documentedKeys returns the top-level JSON keys the README's output table documents (the
// backquoted names of its first column).
func documentedKeys(t *testing.T) []string {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	name := regexp.MustCompile("`([a-z_]+)`")
	var keys []string
	in := false
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		switch {
		case line == "| field | meaning |":
			in = true
		case in && !strings.HasPrefix(line, "|"):
			in = false
		case in && !strings.HasPrefix(line, "| ---"):
			first := strings.Split(line, "|")[1]
			for _, m := range name.FindAllStringSubmatch(first, -1) {
				keys = append(keys, m[1])
			}
		}
		if len(keys) > 0 && !in {
			break
		}
	}
	if len(keys) < 30 {
		t.Fatalf("found %d documented keys in README.md's output table: %v", len(keys), keys)
	}
	return keys
}

// listKeys are the documented keys that hold lists: [] when empty, never null.
var listKeys = []string{"agreeing", "disagreeing", "alternatives", "skewed_columns", "vote_details", "per_k", "columns",
	"ignored_columns", "files", "sketches", "skipped_files", "tables"}

// TestJSONContract: every key the README documents is present in the JSON result of every input
// kind: data files, one saved sketch, merged saved sketches, and the Beam pipeline's result (its
// result writer on the merge of per-unit partial sketches, as the pipeline computes it); lists are
// [] when empty, and throughput and projection are null where no pass of this run measured them.
func TestJSONContract(t *testing.T) {
	ctx := context.Background()
	root := writeLake(t)
	opt := testOptions()
	days, _ := filepath.Glob(filepath.Join(root, "day=*"))
	save := func(sk *sketch.Sketch, name string) string {
		p := filepath.Join(t.TempDir(), name)
		var b bytes.Buffer
		if err := sk.Encode(&b); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	var sketches []string
	for i, day := range days[:2] {
		_, sk, err := kgauge.Estimate(ctx, []string{day}, opt)
		if err != nil {
			t.Fatal(err)
		}
		sketches = append(sketches, save(sk, string(rune('a'+i))+".kgs"))
	}
	results := map[string]*kgauge.Result{}
	for name, inputs := range map[string][]string{"data": {root}, "sketch": sketches[:1], "merged": sketches} {
		res, _, err := kgauge.Estimate(ctx, inputs, opt)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		results[name] = res
	}
	plan, err := kgauge.PlanUnits(ctx, []string{root}, opt)
	if err != nil {
		t.Fatal(err)
	}
	order := make([]int, len(plan.Units))
	for i := range order {
		order[i] = i
	}
	res, err := kgauge.EvaluateMerged(ctx, plan, mergeUnits(t, plan, order), time.Second)
	if err != nil {
		t.Fatal(err)
	}
	results["beam"] = res

	keys := documentedKeys(t)
	for name, res := range results {
		var b bytes.Buffer
		if err := WriteJSON(&b, res); err != nil {
			t.Fatal(err)
		}
		var m map[string]json.RawMessage
		if err := json.Unmarshal(b.Bytes(), &m); err != nil {
			t.Fatal(err)
		}
		for _, k := range keys {
			if _, ok := m[k]; !ok {
				t.Errorf("%s: the result lacks the documented key %q", name, k)
			}
		}
		for _, k := range listKeys {
			if v := strings.TrimSpace(string(m[k])); !strings.HasPrefix(v, "[") {
				t.Errorf("%s: %q is %s, want a list", name, k, v)
			}
		}
		var files, sk []any
		json.Unmarshal(m["files"], &files)
		json.Unmarshal(m["sketches"], &sk)
		wantFiles, wantSketches := 3, 0
		switch name {
		case "sketch":
			wantFiles, wantSketches = 0, 1
		case "merged":
			wantFiles, wantSketches = 0, 2
		}
		if len(files) != wantFiles || len(sk) != wantSketches {
			t.Errorf("%s: %d files and %d sketches, want %d and %d", name, len(files), len(sk), wantFiles, wantSketches)
		}
		// The library leaves throughput and projection to the caller that knows the run's
		// workload (the command line, kgauge.Project); without a pass they stay null.
		for _, k := range []string{"throughput", "projection"} {
			if v := strings.TrimSpace(string(m[k])); v != "null" {
				t.Errorf("%s: %q is %s, want null", name, k, v)
			}
		}
	}
}
