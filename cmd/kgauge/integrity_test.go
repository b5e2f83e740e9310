package main

import (
	"bytes"
	"encoding/json"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/ipc"
	"github.com/apache/arrow/go/v17/arrow/memory"

	"github.com/kgauge/kgauge/internal/atomicfile"
)

// The data integrity cases of issue 13: every file that matches is read or the run says so, each
// input is counted once, outputs never overwrite inputs and are written independently, and text
// from files is inert on a terminal. Each case failed on the binary before the issue was fixed.

// integrityLake returns a directory holding one demo partition file (smallLoads: 20,000 rows) as
// day/part-000.parquet, and that file's bytes.
func integrityLake(t *testing.T) (dir, file string, data []byte) {
	t.Helper()
	src := lake(t, smallLoads())
	files, _ := filepath.Glob(filepath.Join(src, "*", "*.parquet"))
	data, err := os.ReadFile(files[0])
	if err != nil {
		t.Fatal(err)
	}
	dir = filepath.Join(t.TempDir(), "day")
	os.Mkdir(dir, 0o755)
	file = filepath.Join(dir, "part-000.parquet")
	if err := os.WriteFile(file, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return dir, file, data
}

// integrityEstimate runs estimate --json with quickFlags and returns the exit code, the decoded result
// (nil when stdout is not JSON) and stderr.
func integrityEstimate(t *testing.T, args ...string) (int, map[string]any, string) {
	t.Helper()
	code, out, errs := run(t, append(append([]string{"estimate", "--json"}, quickFlags...), args...)...)
	var m map[string]any
	if json.Unmarshal([]byte(out), &m) != nil {
		m = nil
	}
	return code, m, errs
}

func integrityRows(m map[string]any) float64 {
	if m == nil {
		return -1
	}
	r, _ := m["rows"].(float64)
	s, _ := m["skipped_rows"].(float64)
	return r + s
}

// TestUnreadableFilesInDirectories: a truncated or unreadable file inside a directory or a glob is
// an error naming it (it used to be passed over without a word, halving the rows); with
// --skip-unreadable it is skipped, counted and listed in skipped_files and in the table.
func TestUnreadableFilesInDirectories(t *testing.T) {
	dir, file, data := integrityLake(t)
	cut := filepath.Join(dir, "part-001.parquet")
	os.WriteFile(cut, data[:len(data)/2], 0o644)
	for _, in := range []string{dir, filepath.Join(dir, "*.parquet"), filepath.Join(filepath.Dir(dir), "**")} {
		code, m, errs := integrityEstimate(t, in)
		if code != ExitInput || m != nil || !strings.Contains(errs, cut) || !strings.Contains(errs, "--skip-unreadable") {
			t.Errorf("%s: exit %d (want 3), stderr %q; want an error naming %s", in, code, errs, cut)
		}
		code, m, errs = integrityEstimate(t, "--skip-unreadable", in)
		if code != ExitOK || m == nil {
			t.Fatalf("%s --skip-unreadable: exit %d: %s", in, code, errs)
		}
		sk, _ := m["skipped_files"].([]any)
		if len(sk) != 1 || sk[0].(map[string]any)["path"] != cut || sk[0].(map[string]any)["reason"] == "" {
			t.Errorf("%s: skipped_files %v, want %s with a reason", in, m["skipped_files"], cut)
		}
		if files, _ := m["files"].([]any); len(files) != 1 || files[0].(map[string]any)["path"] != file {
			t.Errorf("%s: files %v, want only %s", in, m["files"], file)
		}
		if integrityRows(m) != 20000 {
			t.Errorf("%s: %v rows, want the good file's 20000", in, integrityRows(m))
		}
	}
	code, out, _ := run(t, append(append([]string{"estimate"}, quickFlags...), "--skip-unreadable", dir)...)
	if code != ExitOK || !strings.Contains(out, "SKIPPED 1 unreadable file,") || !strings.Contains(out, cut) {
		t.Errorf("table: exit %d, the skipped file is not listed:\n%s", code, out)
	}
	// A damaged footer whose magic bytes hold fails when the footer is read: skipped the same way.
	footer := bytes.Clone(data)
	for i := len(footer) - 200; i < len(footer)-8; i++ {
		footer[i] = 0x5A
	}
	os.WriteFile(cut, footer, 0o644)
	if code, _, errs := integrityEstimate(t, dir); code != ExitInput || !strings.Contains(errs, cut) {
		t.Errorf("broken footer: exit %d, stderr %q; want 3 naming %s", code, errs, cut)
	}
	if code, m, errs := integrityEstimate(t, "--skip-unreadable", dir); code != ExitOK || integrityRows(m) != 20000 || m["skipped_files"] == nil {
		t.Errorf("broken footer with --skip-unreadable: exit %d, rows %v, skipped %v: %s", code, integrityRows(m), m["skipped_files"], errs)
	}
	os.Remove(cut)
	if os.Geteuid() != 0 {
		locked := filepath.Join(dir, "part-002.parquet")
		os.WriteFile(locked, data, 0o000)
		if code, _, errs := integrityEstimate(t, dir); code != ExitInput || !strings.Contains(errs, locked) || !strings.Contains(errs, "permission") {
			t.Errorf("unreadable file: exit %d, stderr %q; want 3 naming %s", code, errs, locked)
		}
		os.Remove(locked)
	}
}

// TestSymlinksInDirectories: a dangling symbolic link that the glob cannot match is never opened
// (it used to abort the run); one that is matched, or inside a directory read whole, is an
// unreadable file; a link to a data file in the input is the same file, counted once.
func TestSymlinksInDirectories(t *testing.T) {
	dir, file, _ := integrityLake(t)
	dangling := filepath.Join(dir, "latest")
	if err := os.Symlink("no-such-file", dangling); err != nil {
		t.Fatal(err)
	}
	if code, m, errs := integrityEstimate(t, filepath.Join(dir, "*.parquet")); code != ExitOK || integrityRows(m) != 20000 {
		t.Errorf("glob beside a dangling link: exit %d, rows %v: %s", code, integrityRows(m), errs)
	}
	if code, _, errs := integrityEstimate(t, dir); code != ExitInput || !strings.Contains(errs, dangling) {
		t.Errorf("directory with a dangling link: exit %d, stderr %q; want 3 naming %s", code, errs, dangling)
	}
	os.Remove(dangling)
	link := filepath.Join(dir, "alias.parquet")
	if err := os.Symlink("part-000.parquet", link); err != nil {
		t.Fatal(err)
	}
	for _, in := range [][]string{{dir}, {file, link}, {link, filepath.Join(dir, "*")}} {
		code, m, errs := integrityEstimate(t, in...)
		if code != ExitOK || integrityRows(m) != 20000 {
			t.Errorf("%v: exit %d, rows %v; want the one file's 20000 rows: %s", in, code, integrityRows(m), errs)
			continue
		}
		if files, _ := m["files"].([]any); len(files) != 1 || files[0].(map[string]any)["path"] != file {
			t.Errorf("%v: files %v, want %s under its own name", in, m["files"], file)
		}
	}
}

// TestEachInputCountedOnce: a saved sketch named twice, by two names or as a copy, is merged once;
// a sketch together with the data it was built from is refused naming both (exit 2).
func TestEachInputCountedOnce(t *testing.T) {
	dir, file, data := integrityLake(t)
	out := t.TempDir()
	sk := filepath.Join(out, "day.kgs")
	if code, _, errs := integrityEstimate(t, "--save-sketch", sk, dir); code != ExitOK {
		t.Fatalf("save: exit %d: %s", code, errs)
	}
	cp := filepath.Join(out, "copy.kgs")
	os.WriteFile(cp, mustRead(t, sk), 0o644)
	ln := filepath.Join(out, "link.kgs")
	os.Symlink(sk, ln)
	for _, in := range [][]string{{sk, sk}, {sk, ln}, {sk, cp}} {
		code, m, errs := integrityEstimate(t, in...)
		if code != ExitOK || integrityRows(m) != 20000 {
			t.Errorf("%v: exit %d, rows %v; want 20000: %s", in, code, integrityRows(m), errs)
		}
		if s, _ := m["sketches"].([]any); len(s) != 1 {
			t.Errorf("%v: sketches %v, want one", in, m["sketches"])
		}
	}
	// The data again beside its sketch: through the directory, the file, a copy of the file.
	other := filepath.Join(t.TempDir(), "elsewhere.parquet")
	os.WriteFile(other, data, 0o644)
	for _, in := range [][]string{{sk, dir}, {file, cp}, {sk, other}} {
		code, m, errs := integrityEstimate(t, in...)
		if code != ExitUsage || m != nil || !strings.Contains(errs, "same data") {
			t.Errorf("%v: exit %d, stderr %q; want 2 and the same data named twice", in, code, errs)
		}
		first := strings.SplitN(errs, "\n", 2)[0]
		for _, p := range in {
			if p != dir && !strings.Contains(first, p) {
				t.Errorf("%v: %q does not name %s", in, first, p)
			}
		}
	}
	// Two sketches of overlapping data: the day, and the day with another day.
	o := smallLoads()
	o.Seed = 43
	another, _ := filepath.Glob(filepath.Join(lake(t, o), "*", "*.parquet"))
	both := filepath.Join(out, "both.kgs")
	if code, _, errs := integrityEstimate(t, "--save-sketch", both, file, another[0]); code != ExitOK {
		t.Fatalf("sketch of two days: exit %d: %s", code, errs)
	}
	if code, _, errs := integrityEstimate(t, sk, both); code != ExitUsage || !strings.Contains(errs, "overlapping") {
		t.Errorf("overlapping sketches: exit %d, stderr %q; want 2", code, errs)
	}
}

// TestDuplicateColumnNames: a Parquet or Arrow IPC file with two columns of one name is an error
// naming the file and the name (it used to read the first column twice).
func TestDuplicateColumnNames(t *testing.T) {
	dir := t.TempDir()
	schema := arrow.NewSchema([]arrow.Field{{Name: "a", Type: arrow.PrimitiveTypes.Float64},
		{Name: "b", Type: arrow.PrimitiveTypes.Float64}, {Name: "a", Type: arrow.PrimitiveTypes.Float64}}, nil)
	i := 0
	fill := func(b *array.RecordBuilder) {
		b.Field(0).(*array.Float64Builder).Append(float64(i%3) * 10)
		b.Field(1).(*array.Float64Builder).Append(float64(i % 5))
		b.Field(2).(*array.Float64Builder).Append(-float64(i%3)*10 + 1)
		i++
	}
	pq := filepath.Join(dir, "dup.parquet")
	writeParquet(t, pq, schema, fill, 300)
	i = 0
	arrowPath := filepath.Join(dir, "dup.arrow")
	integrityArrowFile(t, arrowPath, schema, fill, 300)
	for _, p := range []string{pq, arrowPath} {
		for _, extra := range [][]string{nil, {"--columns", "a,b"}} {
			code, m, errs := integrityEstimate(t, append(extra, p)...)
			if code != ExitInput || m != nil || !strings.Contains(errs, p) || !strings.Contains(errs, `"a"`) || !strings.Contains(errs, "duplicate column") {
				t.Errorf("%s %v: exit %d, stderr %q; want 3 naming the file and \"a\"", p, extra, code, errs)
			}
		}
		if code, m, errs := integrityEstimate(t, "--columns", "b", "--max-k", "4", p); code != ExitOK || m == nil {
			t.Errorf("%s --columns b: exit %d (the duplicates are not features): %s", p, code, errs)
		}
	}
}

func integrityArrowFile(t *testing.T, path string, schema *arrow.Schema, fill func(b *array.RecordBuilder), rows int) {
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
	defer f.Close()
	w, err := ipc.NewFileWriter(f, ipc.WithSchema(schema))
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

// TestOutputsNeverOverwriteInputs: --out, --save-sketch and --report are checked against every
// input's identity before the run (exit 2 naming both); the input is untouched.
func TestOutputsNeverOverwriteInputs(t *testing.T) {
	dir, file, data := integrityLake(t)
	link := filepath.Join(t.TempDir(), "innocent.json")
	os.Symlink(file, link)
	sk := filepath.Join(t.TempDir(), "s.kgs")
	if code, _, errs := integrityEstimate(t, "--save-sketch", sk, file); code != ExitOK {
		t.Fatalf("save: %s", errs)
	}
	skData := mustRead(t, sk)
	for _, tc := range []struct {
		flag, out string
		inputs    []string
	}{
		{"--out", file, []string{file}},
		{"--out", file, []string{dir}},
		{"--save-sketch", link, []string{dir}},
		{"--report", file, []string{filepath.Join(dir, "*.parquet")}},
		{"--save-sketch", sk, []string{sk}},
	} {
		code, m, errs := integrityEstimate(t, append([]string{tc.flag, tc.out}, tc.inputs...)...)
		first := strings.SplitN(errs, "\n", 2)[0]
		if code != ExitUsage || m != nil || !strings.Contains(first, tc.flag+" "+tc.out) || !strings.Contains(first, "input") {
			t.Errorf("%s %s %v: exit %d, stderr %q; want 2 naming the output and the input", tc.flag, tc.out, tc.inputs, code, errs)
		}
		if !bytes.Equal(mustRead(t, file), data) || !bytes.Equal(mustRead(t, sk), skData) {
			t.Fatalf("%s %s: an input was modified", tc.flag, tc.out)
		}
	}
	same := filepath.Join(t.TempDir(), "r.json")
	if code, _, errs := integrityEstimate(t, "--out", same, "--report", same, file); code != ExitUsage || !strings.Contains(errs, "--out") || !strings.Contains(errs, "--report") {
		t.Errorf("--out and --report one file: exit %d, stderr %q; want 2 naming both", code, errs)
	}
}

// TestOutputsIndependent: a failure to write one output (the sketch, on a full disk) still writes
// the others and prints the result; exit 4 names the output that failed. A temporary file of a
// killed earlier run next to an output is removed by the next successful write.
func TestOutputsIndependent(t *testing.T) {
	dir, _, _ := integrityLake(t)
	outDir := t.TempDir()
	res, sk := filepath.Join(outDir, "result.json"), filepath.Join(outDir, "run.kgs")
	atomicfile.WrapWriter = func(w io.Writer) io.Writer {
		if f, ok := w.(*os.File); ok && strings.Contains(filepath.Base(f.Name()), ".kgs.") {
			return fullDisk{}
		}
		return w
	}
	defer func() { atomicfile.WrapWriter = nil }()
	code, m, errs := integrityEstimate(t, "--out", res, "--save-sketch", sk, dir)
	if code != ExitOutput || !strings.Contains(errs, "--save-sketch") || !strings.Contains(errs, sk) || strings.Contains(errs, "--out") {
		t.Errorf("exit %d, stderr %q; want 4 naming --save-sketch only", code, errs)
	}
	if m == nil || integrityRows(m) != 20000 {
		t.Errorf("the result was not printed (rows %v)", integrityRows(m))
	}
	var written map[string]any
	if err := json.Unmarshal(mustRead(t, res), &written); err != nil || written["k"] != m["k"] {
		t.Errorf("--out not written: %v", err)
	}
	if _, err := os.Stat(sk); !os.IsNotExist(err) {
		t.Errorf("the failed sketch exists: %v", err)
	}
	atomicfile.WrapWriter = nil

	// A run killed while writing left its temporary file (the process is gone).
	dead := exec.Command("true")
	if err := dead.Run(); err != nil {
		t.Skip(err)
	}
	stale := filepath.Join(outDir, ".result.json.tmp-"+strconv.Itoa(dead.Process.Pid)+"-42")
	os.WriteFile(stale, []byte(`{"k": `), 0o644)
	if code, _, errs := integrityEstimate(t, "--out", res, dir); code != ExitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if _, err := os.Stat(stale); !os.IsNotExist(err) {
		t.Errorf("stale temporary file %s not removed", stale)
	}
}

// TestUntrustedTextInert: terminal escape sequences in column names reach stdout escaped in the
// "not used as features" line, as they already were in errors.
func TestUntrustedTextInert(t *testing.T) {
	evil := "note\x1b]0;pwned\x07\x1b[2J"
	p := filepath.Join(t.TempDir(), "evil.parquet")
	schema := arrow.NewSchema([]arrow.Field{{Name: "x", Type: arrow.PrimitiveTypes.Float64},
		{Name: "y", Type: arrow.PrimitiveTypes.Float64}, {Name: evil, Type: arrow.BinaryTypes.String}}, nil)
	i := 0
	writeParquet(t, p, schema, func(b *array.RecordBuilder) {
		b.Field(0).(*array.Float64Builder).Append(float64(i%3) * 10)
		b.Field(1).(*array.Float64Builder).Append(float64(i % 5))
		b.Field(2).(*array.StringBuilder).Append("m")
		i++
	}, 300)
	code, out, errs := run(t, append(append([]string{"estimate"}, quickFlags...), "--max-k", "4", p)...)
	if code != ExitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if strings.ContainsAny(out, "\x1b\x07") {
		t.Errorf("raw escape sequence on stdout:\n%q", out)
	}
	if !strings.Contains(out, `note\x1b]0;pwned\a\x1b[2J`) {
		t.Errorf("the column name is not shown escaped:\n%s", out)
	}
	// A column of that name asked for: the error quotes it, and the whole line is inert.
	code, _, errs = run(t, append(append([]string{"estimate"}, quickFlags...), "--columns", "x,"+evil+"z", p)...)
	if code != ExitInput || strings.ContainsAny(errs, "\x1b\x07") {
		t.Errorf("exit %d, stderr %q", code, errs)
	}
}
