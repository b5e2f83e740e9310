package ledger

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func rec(partition string, k int) Record {
	return Record{Schema: SchemaVersion, Partition: partition, K: k, Rows: 100, Agreement: 0.6,
		Columns: []string{"a", "b"}, Scale: "zscore", Votes: map[string]*int{},
		PerK:  []Scores{{K: 1, Valid: true, WCSS: 400, Silhouette: Float(math.NaN())}, {K: 2, Valid: true, WCSS: 150}},
		Drift: Drift{Reasons: []Reason{}, Window: []string{}, WCSSPerRow: Float(math.NaN()), WindowWCSSPerRow: Float(math.NaN())}}
}

func TestAppendAndOpen(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ledger.jsonl")
	l, err := Open(path)
	if err != nil {
		t.Fatalf("Open of a missing ledger: %v", err)
	}
	if len(l.Records) != 0 || l.Remnant != nil {
		t.Fatalf("missing ledger: %d records, remnant %v", len(l.Records), l.Remnant)
	}
	for i, p := range []string{"day=2026-11-28", "day=2026-11-29", "day=2026-11-30"} {
		if err := l.Append(rec(p, i+2)); err != nil {
			t.Fatal(err)
		}
	}
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if n := bytes.Count(data, []byte("\n")); n != 3 || data[len(data)-1] != '\n' {
		t.Errorf("ledger has %d newlines (want 3, the last at the end)", n)
	}
	if !bytes.Contains(data, []byte(`"silhouette":null`)) {
		t.Errorf("NaN silhouette not written as null:\n%s", data)
	}
	l2, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(l2.Records) != 3 {
		t.Fatalf("reopened ledger has %d records, want 3", len(l2.Records))
	}
	for i, r := range l2.Records {
		if r.K != i+2 || !l2.Has(r.Partition) {
			t.Errorf("record %d: k %d, Has %v", i, r.K, l2.Has(r.Partition))
		}
	}
	if l2.Has("day=2026-12-01") {
		t.Error("Has reports a partition never appended")
	}
	if s := l2.Records[0].PerK[0].Silhouette; !math.IsNaN(float64(s)) {
		t.Errorf("null silhouette read back as %v, want NaN", s)
	}
	if v, ok := l2.Records[0].WCSSPerRow(2); !ok || v != 1.5 {
		t.Errorf("WCSSPerRow(2) = %v, %v; want 1.5, true", v, ok)
	}
	if _, ok := l2.Records[0].WCSSPerRow(5); ok {
		t.Error("WCSSPerRow of a k without scores reports ok")
	}
}

// writeLedger writes n valid records and returns the file's bytes.
func writeLedger(t *testing.T, path string, n int) []byte {
	t.Helper()
	l, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	for i := range n {
		if err := l.Append(rec("day=2026-11-0"+string(rune('1'+i)), 3)); err != nil {
			t.Fatal(err)
		}
	}
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return data
}

func TestOpenCorruptLine(t *testing.T) {
	for _, tc := range []struct {
		name    string
		line    string // replaces line 2 of 3
		wantMsg string
	}{
		{"NotJSON", "{this is not json", "not a valid ledger record"},
		{"TextAfter", `{"schema":1,"partition":"day=x"} {}`, "text after"},
		{"NoSchema", `{"partition":"day=x"}`, "no schema"},
		{"NewerSchema", `{"schema":99,"partition":"day=x"}`, "schema 99"},
		{"NoPartition", `{"schema":1}`, "no partition"},
		{"Empty", "", "empty line"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "ledger.jsonl")
			lines := strings.SplitAfter(string(writeLedger(t, path, 3)), "\n")
			lines[1] = tc.line + "\n"
			bad := []byte(strings.Join(lines, ""))
			if err := os.WriteFile(path, bad, 0o644); err != nil {
				t.Fatal(err)
			}
			_, err := Open(path)
			var le *LineError
			if !errors.As(err, &le) {
				t.Fatalf("Open: %v, want a *LineError", err)
			}
			if le.Line != 2 || !errors.Is(err, ErrCorrupt) {
				t.Errorf("LineError line %d (want 2), Is(ErrCorrupt) %v", le.Line, errors.Is(err, ErrCorrupt))
			}
			if msg := err.Error(); !strings.Contains(msg, path+":2:") || !strings.Contains(msg, tc.wantMsg) {
				t.Errorf("message %q lacks %q or %q", msg, path+":2:", tc.wantMsg)
			}
		})
	}
}

func TestOpenIncompleteLastLine(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ledger.jsonl")
	data := writeLedger(t, path, 3)
	// A crash in the middle of a non-atomic write of line 3: its second half and newline are lost.
	last := bytes.LastIndexByte(data[:len(data)-1], '\n') + 1
	cut := data[:last+(len(data)-last)/2]
	if err := os.WriteFile(path, cut, 0o644); err != nil {
		t.Fatal(err)
	}
	l, err := Open(path)
	if err != nil {
		t.Fatalf("Open of a ledger with an incomplete last line: %v", err)
	}
	if len(l.Records) != 2 || l.Remnant == nil || l.Remnant.Line != 3 {
		t.Fatalf("%d records, remnant %v; want 2 and a remnant at line 3", len(l.Records), l.Remnant)
	}
	if l.Has("day=2026-11-03") {
		t.Error("the partition of the incomplete line counts as recorded")
	}
	if !strings.Contains(l.Remnant.String(), "line 3") {
		t.Errorf("remnant report %q does not name the line", l.Remnant)
	}
	if err := l.Append(rec("day=2026-11-03", 4)); err != nil {
		t.Fatal(err)
	}
	l2, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(l2.Records) != 3 || l2.Remnant != nil || l2.Records[2].K != 4 {
		t.Errorf("after redo: %d records, remnant %v", len(l2.Records), l2.Remnant)
	}

	// A complete record whose newline is missing (another tool's writer) is kept.
	data, _ = os.ReadFile(path)
	os.WriteFile(path, bytes.TrimSuffix(data, []byte("\n")), 0o644)
	l3, err := Open(path)
	if err != nil || len(l3.Records) != 3 || l3.Remnant != nil {
		t.Errorf("complete unterminated last line: err %v, %d records, remnant %v", err, len(l3.Records), l3.Remnant)
	}
}

func TestRemoveTemps(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "ledger.jsonl")
	sk := SketchDir(path)
	os.MkdirAll(filepath.Join(sk, "region=n"), 0o755)
	stale := []string{filepath.Join(dir, ".ledger.jsonl.tmp-123"),
		filepath.Join(sk, ".day=2026-11-28.kgs.tmp-456"), filepath.Join(sk, "region=n", ".day=2026-11-28.kgs.tmp-7")}
	keep := []string{path, filepath.Join(dir, ".other.jsonl.tmp-1"), filepath.Join(sk, "day=2026-11-28.kgs")}
	for _, p := range append(stale, keep...) {
		if err := os.WriteFile(p, []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	removed, err := RemoveTemps(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(removed) != len(stale) {
		t.Errorf("removed %v, want %v", removed, stale)
	}
	for _, p := range stale {
		if _, err := os.Stat(p); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("%s not removed", p)
		}
	}
	for _, p := range keep {
		if _, err := os.Stat(p); err != nil {
			t.Errorf("%s removed: %v", p, err)
		}
	}
	if _, err := RemoveTemps(filepath.Join(t.TempDir(), "new.jsonl")); err != nil {
		t.Errorf("RemoveTemps without sketches: %v", err)
	}
}

func TestSketchPath(t *testing.T) {
	path, rel := SketchPath(filepath.Join("var", "kg", "loads.jsonl"), "region=n/day=2026-11-28")
	if want := filepath.Join("var", "kg", "loads.jsonl.sketches", "region=n", "day=2026-11-28.kgs"); path != want {
		t.Errorf("path %q, want %q", path, want)
	}
	if want := "loads.jsonl.sketches/region=n/day=2026-11-28.kgs"; rel != want {
		t.Errorf("rel %q, want %q", rel, want)
	}
}
