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
var quickFlags = []string{"--max-k", "8", "--coreset", "2000", "--gap-refs", "5", "--gap-sample", "1000", "--anchors", "400", "--quiet"}

// stripTimings removes the run-time figures, which vary, from a JSON result.
func stripTimings(t *testing.T, js string) map[string]any {
	t.Helper()
	var m map[string]any
	if err := json.Unmarshal([]byte(js), &m); err != nil {
		t.Fatalf("output is not JSON: %v\n%s", err, js)
	}
	delete(m, "timings")
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
	for i, day := range days {
		sk := filepath.Join(t.TempDir(), "day"+string(rune('a'+i))+".kgs")
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
}

func TestDemo(t *testing.T) {
	code, out, errs := run(t, append([]string{"demo", "--rows", "20000"}, quickFlags...)...)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "the generator used k = 5") || !strings.Contains(out, "verdict: k = ") {
		t.Errorf("demo output:\n%s", out)
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

// TestBadInput: each bad input or flag gives one line on stderr that names the file, column or
// flag, the documented exit code, and no panic.
func TestBadInput(t *testing.T) {
	dir := t.TempDir()
	good := lake(t, smallLoads())
	goodFile, _ := filepath.Glob(filepath.Join(good, "*", "*.parquet"))
	data, err := os.ReadFile(goodFile[0])
	if err != nil {
		t.Fatal(err)
	}
	notParquet := filepath.Join(dir, "notes.parquet")
	os.WriteFile(notParquet, []byte("meter,kwh\n1,2\n"), 0o644)
	truncated := filepath.Join(dir, "cut.parquet")
	os.WriteFile(truncated, data[:len(data)/2], 0o644)
	emptyDir := filepath.Join(dir, "empty")
	os.Mkdir(emptyDir, 0o755)
	os.WriteFile(filepath.Join(emptyDir, "_SUCCESS"), nil, 0o644)

	floatSchema := arrow.NewSchema([]arrow.Field{{Name: "x", Type: arrow.PrimitiveTypes.Float64}, {Name: "y", Type: arrow.PrimitiveTypes.Float64}}, nil)
	zeroRows := filepath.Join(dir, "zero.parquet")
	writeParquet(t, zeroRows, floatSchema, nil, 0)
	few := filepath.Join(dir, "few.parquet")
	i := 0
	writeParquet(t, few, floatSchema, func(b *array.RecordBuilder) {
		i++
		b.Field(0).(*array.Float64Builder).Append(float64(i))
		b.Field(1).(*array.Float64Builder).Append(float64(i * i))
	}, 5)
	strs := filepath.Join(dir, "strings.parquet")
	writeParquet(t, strs, arrow.NewSchema([]arrow.Field{{Name: "meter_id", Type: arrow.BinaryTypes.String}}, nil),
		func(b *array.RecordBuilder) { b.Field(0).(*array.StringBuilder).Append("m-1") }, 10)

	for _, tc := range []struct {
		name string
		args []string
		code int
		want string // must appear in the one-line message
	}{
		{"missing path", []string{"estimate", filepath.Join(dir, "nope.parquet")}, ExitInput, "nope.parquet"},
		{"no data files", []string{"estimate", emptyDir}, ExitInput, "empty"},
		{"not parquet", []string{"estimate", notParquet}, ExitInput, "notes.parquet"},
		{"truncated", []string{"estimate", truncated}, ExitInput, "cut.parquet"},
		{"zero rows", []string{"estimate", zeroRows}, ExitInput, "no usable rows"},
		{"fewer rows than max-k", []string{"estimate", few}, ExitInput, "max-k"},
		{"no numeric column", []string{"estimate", strs}, ExitInput, "strings.parquet"},
		{"unknown column", []string{"estimate", "--columns", "h00,watts", good}, ExitInput, "watts"},
		{"named string column", []string{"estimate", "--columns", "h00,tariff", good}, ExitInput, "tariff"},
		{"max-k below min-k", []string{"estimate", "--min-k", "5", "--max-k", "3", good}, ExitUsage, "--max-k"},
		{"zero workers", []string{"estimate", "--workers", "0", good}, ExitUsage, "--workers"},
		{"negative coreset", []string{"estimate", "--coreset", "-5", good}, ExitUsage, "--coreset"},
		{"unknown flag", []string{"estimate", "--colour", good}, ExitUsage, "colour"},
		{"bad scale", []string{"estimate", "--scale", "log", good}, ExitUsage, "--scale"},
		{"no path", []string{"estimate"}, ExitUsage, "no PATH"},
		{"unknown command", []string{"guess"}, ExitUsage, "guess"},
		{"output dir missing", []string{"estimate", "--out", filepath.Join(dir, "no", "r.json"), good}, ExitOutput, "does not exist"},
		{"synth bad archetypes", []string{"synth", "--archetypes", "9", "--out", dir}, ExitUsage, "archetypes"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, out, errs := run(t, append(tc.args[:1:1], append([]string{"--quiet"}, tc.args[1:]...)...)...)
			if tc.args[0] != "estimate" {
				code, out, errs = run(t, tc.args...)
			}
			if code != tc.code {
				t.Errorf("exit %d, want %d; stderr: %s", code, tc.code, errs)
			}
			if out != "" {
				t.Errorf("stdout not empty: %q", out)
			}
			first := strings.SplitN(strings.TrimSpace(errs), "\n", 2)[0]
			if !strings.Contains(first, tc.want) {
				t.Errorf("first stderr line %q does not name %q", first, tc.want)
			}
			if strings.Contains(errs, "goroutine ") || strings.Contains(errs, "panic") {
				t.Errorf("stack trace on stderr: %s", errs)
			}
			if lines := strings.Count(strings.TrimSpace(errs), "\n"); code == ExitInput && lines > 0 {
				t.Errorf("input errors must be one line, got %d:\n%s", lines+1, errs)
			}
		})
	}
}
