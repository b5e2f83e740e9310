package ledger

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// TestStates: the latest record of a partition is its state; only done partitions count as held
// and form the drift history; a version-1 record (no status) reads as done; an unknown status is
// a corrupt line.
func TestStates(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ledger.jsonl")
	l, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	add := func(p, status string) {
		r := rec(p, 3)
		r.Status = status
		if err := l.Append(r); err != nil {
			t.Fatal(err)
		}
	}
	add("day=1", StatusDone)
	add("day=2", StatusFailed)
	add("day=3", StatusIncomplete)
	add("day=2", StatusDone) // retried
	add("day=4", StatusQuarantined)
	add("day=1", StatusIncomplete) // a rebuild that lost a file
	old := rec("day=5", 2)
	old.Schema = 1 // written before status existed
	if err := l.Append(old); err != nil {
		t.Fatal(err)
	}
	l, err = Open(path)
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]string{"day=1": StatusIncomplete, "day=2": StatusDone, "day=3": StatusIncomplete,
		"day=4": StatusQuarantined, "day=5": StatusDone}
	for p, s := range want {
		if r := l.Latest(p); r == nil || r.Status != s {
			t.Errorf("%s: latest %v, want status %s", p, r, s)
		}
		if l.Has(p) != (s == StatusDone) {
			t.Errorf("%s: Has %v with status %s", p, l.Has(p), s)
		}
	}
	var hist []string
	for _, r := range l.History() {
		hist = append(hist, r.Partition)
	}
	if !slices.Equal(hist, []string{"day=2", "day=5"}) {
		t.Errorf("history %v, want the done partitions day=2, day=5", hist)
	}
	data, _ := os.ReadFile(path)
	bad := strings.Replace(string(data), `"status":"failed"`, `"status":"mystery"`, 1)
	os.WriteFile(path, []byte(bad), 0o644)
	if _, err := Open(path); err == nil || !strings.Contains(err.Error(), ":2:") || !strings.Contains(err.Error(), "mystery") {
		t.Errorf("unknown status: %v, want an error at line 2", err)
	}
}

// TestPartitionsKeepUnreadable: an unreadable file is kept in its partition's Skipped, so it fails
// that partition and not the whole lake.
func TestPartitionsKeepUnreadable(t *testing.T) {
	root := t.TempDir()
	writeDays(t, root, 2)
	cut := filepath.Join(root, "day=2026-11-29", "part-001.parquet")
	data, err := os.ReadFile(filepath.Join(root, "day=2026-11-29", "part-000.parquet"))
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(cut, data[:len(data)/2], 0o644)
	parts, _, err := Partitions(root)
	if err != nil {
		t.Fatal(err)
	}
	if len(parts) != 2 || len(parts[0].Skipped) != 0 || len(parts[1].Skipped) != 1 || parts[1].Skipped[0].Path != cut || len(parts[1].Files) != 1 {
		t.Fatalf("partitions %+v; want the cut file skipped in the second day only", parts)
	}
}
