package ledger

import (
	"os"
	"path/filepath"
	"slices"
	"testing"
	"time"

	"github.com/kgauge/kgauge/bench/synth"
)

// writeDays writes n tiny demo partitions day=... under dir.
func writeDays(t *testing.T, dir string, n int) {
	t.Helper()
	o := synth.DefaultLoadOptions()
	o.Rows, o.RowGroup, o.Partitions = 40, 40, n
	o.Start = time.Date(2026, 11, 28, 0, 0, 0, 0, time.UTC)
	if _, err := synth.WriteLoads(dir, o); err != nil {
		t.Fatal(err)
	}
}

func TestPartitions(t *testing.T) {
	root := t.TempDir()
	writeDays(t, filepath.Join(root, "region=north"), 2)
	writeDays(t, filepath.Join(root, "region=s%C3%BCd"), 1)
	writeDays(t, filepath.Join(root, "misc"), 1)     // below a segment that is not KEY=VALUE
	writeDays(t, filepath.Join(root, "_staging"), 1) // skipped, as by estimate
	loose := filepath.Join(root, "loose.parquet")
	data, err := os.ReadFile(filepath.Join(root, "region=north", "day=2026-11-28", "part-000.parquet"))
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(loose, data, 0o644)
	os.WriteFile(filepath.Join(root, "region=north", "day=2026-11-28", "_SUCCESS"), nil, 0o644)
	os.WriteFile(filepath.Join(root, "region=north", "day=2026-11-28", "notes.txt"), []byte("not data"), 0o644)

	parts, outside, err := Partitions(root)
	if err != nil {
		t.Fatal(err)
	}
	var keys []string
	for _, p := range parts {
		keys = append(keys, p.Key)
	}
	want := []string{"region=north/day=2026-11-28", "region=north/day=2026-11-29", "region=s%C3%BCd/day=2026-11-28"}
	if !slices.Equal(keys, want) {
		t.Errorf("keys %v, want %v", keys, want)
	}
	if len(parts) == 3 {
		if v := parts[2].Values; len(v) != 2 || v[0] != (KeyValue{"region", "süd"}) || v[1] != (KeyValue{"day", "2026-11-28"}) {
			t.Errorf("values %v, want region=süd, day=2026-11-28", v)
		}
		if f := parts[0].Files; len(f) != 1 || filepath.Base(f[0]) != "part-000.parquet" {
			t.Errorf("files %v, want the one part-000.parquet", f)
		}
	}
	wantOut := []string{loose, filepath.Join(root, "misc", "day=2026-11-28", "part-000.parquet")}
	slices.Sort(wantOut)
	if !slices.Equal(outside, wantOut) {
		t.Errorf("outside %v, want %v", outside, wantOut)
	}

	if _, _, err := Partitions(filepath.Join(root, "missing")); err == nil {
		t.Error("Partitions of a missing root: no error")
	}
}
