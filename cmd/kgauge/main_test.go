package main

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/memory"
	"github.com/apache/arrow/go/v17/parquet/pqarrow"
	"github.com/kgauge/kgauge/bench/synth"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// run calls Run as main does and returns the exit code and both streams.
func run(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errs bytes.Buffer
	code := Run(context.Background(), args, &out, &errs)
	return code, out.String(), errs.String()
}

// lake writes a small demo partition set once per test binary.
func lake(t *testing.T, opt synth.LoadOptions) string {
	t.Helper()
	dir := t.TempDir()
	if _, err := synth.WriteLoads(dir, opt); err != nil {
		t.Fatal(err)
	}
	return dir
}

func smallLoads() synth.LoadOptions {
	o := synth.DefaultLoadOptions()
	o.Rows = 20000
	o.RowGroup = 4096
	o.Seed = 42
	return o
}

// quickFlags keep the CLI tests fast; the defaults are exercised by the benchmarks.
var quickFlags = []string{"--workers", "2", "--max-k", "8", "--coreset", "2000", "--gap-refs", "5", "--gap-sample", "1000", "--anchors", "400", "--quiet"}

// stripTimings removes the run-time figures, which vary, from a JSON result.
func stripTimings(t *testing.T, js string) map[string]any {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal([]byte(js), &m); err != nil {
		t.Fatalf("output is not JSON: %v\n%s", err, js)
	}
	delete(m, "timings")
	delete(m, "throughput") // measured speed and the model's projection vary with the machine's load
	delete(m, "projection")
	files, _ := m["files"].([]any)
	for _, f := range files {
		if fm, ok := f.(map[string]any); ok {
			fm["path"] = filepath.Base(fm["path"].(string))
		}
	}
	return m
}

func canonical(t *testing.T, m map[string]any) []byte {
	t.Helper()
	b, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	return append(b, '\n')
}

func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name)
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test ./cmd/kgauge -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		os.WriteFile(path+".got", got, 0o644)
		t.Errorf("output differs from %s; see %s.got", path, path)
	}
}

// TestEstimateFiveArchetypes is the acceptance check of the end-to-end job: a synth partition with
// five archetypes gives k = 5, in the table and in JSON, and both match their golden files.
func TestEstimateFiveArchetypes(t *testing.T) {
	dir := lake(t, smallLoads())
	args := append([]string{"estimate", "--json"}, quickFlags...)
	code, out, errs := run(t, append(args, dir)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	m := stripTimings(t, out)
	if k := m["k"]; k != 5.0 {
		t.Errorf(`"k": %v, want 5`, k)
	}
	for _, field := range []string{"k", "runner_up", "agreement", "votes", "per_k", "rows", "skipped_rows",
		"columns", "ignored_columns", "files", "seed", "version", "probe_rows"} {
		if _, ok := m[field]; !ok {
			t.Errorf("JSON lacks %q", field)
		}
	}
	if n := len(m["per_k"].([]any)); n != 8 {
		t.Errorf("per_k has %d entries, want 8", n)
	}
	if cols := m["columns"].([]any); len(cols) != 24 || cols[0] != "h00" {
		t.Errorf("columns %v, want h00..h23", cols)
	}
	golden(t, "estimate-loads.json", canonical(t, m))

	code, out, errs = run(t, append(quickFlags, "estimate", dir)[len(quickFlags):]...)
	_ = out
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	code, out, errs = run(t, append(append([]string{"estimate"}, quickFlags...), dir)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "verdict: k = 5") {
		t.Errorf("table output lacks the verdict line:\n%s", out)
	}
	golden(t, "estimate-loads.txt", []byte(out))
}

// TestDeterministic: the same input, flags and seed give the same JSON (timings aside), and sorted
// rows give the same k as shuffled ones.
func TestDeterministic(t *testing.T) {
	opt := smallLoads()
	dir := lake(t, opt)
	opt.Order = synth.Sorted
	sorted := lake(t, opt)
	args := append([]string{"estimate", "--json", "--seed", "7"}, quickFlags...)
	_, a, _ := run(t, append(args, dir)...)
	_, b, _ := run(t, append(args, dir)...)
	if !bytes.Equal(canonical(t, stripTimings(t, a)), canonical(t, stripTimings(t, b))) {
		t.Error("two runs with the same seed differ")
	}
	_, c, errs := run(t, append(args, sorted)...)
	if got, want := stripTimings(t, c)["k"], stripTimings(t, a)["k"]; got != want {
		t.Errorf("sorted input gives k=%v, shuffled k=%v (%s)", got, want, errs)
	}
	_, w1, _ := run(t, append(append(args, "--workers", "1"), dir)...)
	if got, want := stripTimings(t, w1)["k"], stripTimings(t, a)["k"]; got != want {
		t.Errorf("one worker gives k=%v, default workers k=%v", got, want)
	}
}

// TestSavedSketchesMerge: sketches saved per partition and merged give the verdict of a direct
// estimate over the same files, without reading them again.
func TestSavedSketchesMerge(t *testing.T) {
	opt := smallLoads()
	opt.Partitions = 2
	dir := lake(t, opt)
	days, _ := filepath.Glob(filepath.Join(dir, "day=*"))
	if len(days) != 2 {
		t.Fatalf("%d partitions, want 2", len(days))
	}
	var sketches []string
	skDir := t.TempDir()
	for i, day := range days {
		sk := filepath.Join(skDir, "day"+string(rune('a'+i))+".kgs")
		args := append(append([]string{"estimate", "--save-sketch", sk}, quickFlags...), day)
		if code, _, errs := run(t, args...); code != 0 {
			t.Fatalf("exit %d: %s", code, errs)
		}
		sketches = append(sketches, sk)
	}
	_, direct, _ := run(t, append(append([]string{"estimate", "--json"}, quickFlags...), dir)...)
	code, merged, errs := run(t, append(append([]string{"estimate", "--json"}, quickFlags...), sketches...)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	d, m := stripTimings(t, direct), stripTimings(t, merged)
	if d["k"] != m["k"] || d["rows"] != m["rows"] || d["skipped_rows"] != m["skipped_rows"] {
		t.Errorf("merged sketches: k=%v rows=%v skipped=%v; direct: k=%v rows=%v skipped=%v",
			m["k"], m["rows"], m["skipped_rows"], d["k"], d["rows"], d["skipped_rows"])
	}

	// Saved sketches are inputs like data files: a quoted glob (expanded by kgauge, not the
	// shell), their directory, and a sketch beside a data file all give the same result.
	os.WriteFile(filepath.Join(skDir, "_SUCCESS"), nil, 0o644)
	os.WriteFile(filepath.Join(skDir, "notes.txt"), []byte("not data\n"), 0o644)
	forms := []struct {
		name string
		args []string
	}{
		{"QuotedGlob", []string{filepath.Join(skDir, "day*.kgs")}},
		{"Directory", []string{skDir}},
		{"GlobAndData", []string{filepath.Join(skDir, "daya.kgs*"), days[1]}},
	}
	for _, f := range forms {
		t.Run(f.name, func(t *testing.T) {
			code, out, errs := run(t, append(append([]string{"estimate", "--json"}, quickFlags...), f.args...)...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			g := stripTimings(t, out)
			if g["k"] != d["k"] || g["rows"] != d["rows"] || g["skipped_rows"] != d["skipped_rows"] {
				t.Errorf("k=%v rows=%v skipped=%v; direct: k=%v rows=%v skipped=%v",
					g["k"], g["rows"], g["skipped_rows"], d["k"], d["rows"], d["skipped_rows"])
			}
		})
	}

	// A sketch and a data file of other columns: one line naming the sketch and both column sets.
	code, _, errs = run(t, append(append([]string{"estimate", "--columns", "h00,h01"}, quickFlags...), sketches[0], days[1])...)
	if code != 3 || !strings.Contains(errs, "daya.kgs") || !strings.Contains(errs, `"h00", "h01"`) ||
		strings.Count(strings.TrimSpace(errs), "\n") != 0 {
		t.Errorf("sketch and data of other columns: exit %d, %q; want 3 naming the sketch and the columns", code, errs)
	}
}

func TestDemo(t *testing.T) {
	demoFlags := []string{"demo", "--rows", "20000", "--max-k", "8", "--workers", "2", "--quiet"}
	code, out, errs := run(t, demoFlags...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "the generator used k = 5") || !strings.Contains(out, "verdict: k = ") ||
		!strings.Contains(out, "removed afterwards") {
		t.Errorf("demo output:\n%s", out)
	}
	// Flags of the estimate's sketch sizes are not demo flags.
	if code, _, errs := run(t, "demo", "--coreset", "2000"); code != ExitUsage || !strings.Contains(errs, "coreset") {
		t.Errorf("demo --coreset: exit %d, %q; want a usage error naming the flag", code, errs)
	}
	// --keep writes the partition where asked and keeps it.
	keep := filepath.Join(t.TempDir(), "kept")
	code, out, errs = run(t, append(demoFlags, "--keep", keep)...)
	if code != 0 {
		t.Fatalf("demo --keep: exit %d: %s", code, errs)
	}
	files, _ := filepath.Glob(filepath.Join(keep, "day=*", "*.parquet"))
	if len(files) != 1 || !strings.Contains(out, "kept in "+filepath.Dir(files[0])) {
		t.Errorf("demo --keep %s: files %v, output:\n%s", keep, files, out)
	}
}

// writeTable writes an Arrow table as Parquet with pqarrow.
func writeParquet(t *testing.T, path string, schema *arrow.Schema, fill func(b *array.RecordBuilder), rows int) {
	t.Helper()
	b := array.NewRecordBuilder(memory.DefaultAllocator, schema)
	defer b.Release()
	for range rows {
		fill(b)
	}
	rec := b.NewRecord()
	defer rec.Release()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w, err := pqarrow.NewFileWriter(schema, f, nil, pqarrow.DefaultWriterProps())
	if err != nil {
		t.Fatal(err)
	}
	if err := w.Write(rec); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}
