package lake

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/stream/lake/laketest"
)

// TestCommitDelta checks the Delta writer against this package's reader: the first commit creates
// the table, an overwrite removes the partition's earlier files and keeps the others, a commit of
// another partitioning is refused, and a version already written is never written again.
func TestCommitDelta(t *testing.T) {
	root := filepath.Join(t.TempDir(), "t")
	cols := []DeltaColumn{{"id", "long", false}, {"x", "double", false}, {"y", "double", false}, {"day", "string", false}}
	write := func(rel string, from, to int64) DeltaFile {
		size := laketest.WriteRows(t, filepath.Join(root, filepath.FromSlash(rel)), laketest.Rows(from, to))
		return DeltaFile{Path: rel, Partition: map[string]string{"day": strings.TrimPrefix(filepath.Dir(rel), "day=")}, Size: size}
	}
	a, b := write("day=1/a.parquet", 0, 50), write("day=2/b.parquet", 50, 90)
	if v, err := CommitDelta(root, cols, []string{"day"}, []DeltaFile{a, b}, true); err != nil || v != 0 {
		t.Fatalf("first commit: version %d, %v", v, err)
	}
	c := write("day=2/c.parquet", 90, 100)
	if v, err := CommitDelta(root, cols, []string{"day"}, []DeltaFile{c}, true); err != nil || v != 1 {
		t.Fatalf("overwrite of day 2: version %d, %v", v, err)
	}
	for _, tc := range []struct {
		version int64
		want    []string
	}{{0, []string{"day=1/a.parquet", "day=2/b.parquet"}}, {1, []string{"day=1/a.parquet", "day=2/c.parquet"}}} {
		tbl, err := readDelta(loc{false, root}, &tc.version)
		if err != nil {
			t.Fatal(err)
		}
		files, _, err := tbl.files("", nil)
		if err != nil {
			t.Fatal(err)
		}
		var got []string
		for _, f := range files {
			rel, _ := filepath.Rel(root, f.Path)
			got = append(got, filepath.ToSlash(rel))
		}
		if strings.Join(got, " ") != strings.Join(tc.want, " ") {
			t.Errorf("version %d: live %v, want %v", tc.version, got, tc.want)
		}
	}
	if _, err := CommitDelta(root, cols, []string{"id"}, []DeltaFile{c}, false); err == nil || !strings.Contains(err.Error(), "partitioned by [day]") {
		t.Errorf("a commit partitioned otherwise: %v", err)
	}
	commit := filepath.Join(root, "_delta_log", "00000000000000000001.json")
	before, err := os.ReadFile(commit)
	if err != nil {
		t.Fatal(err)
	}
	if err := putIfAbsent(commit, []byte("{}\n")); err == nil || !strings.Contains(err.Error(), "committed it first") {
		t.Errorf("writing version 1 again: %v", err)
	}
	if after, _ := os.ReadFile(commit); string(after) != string(before) {
		t.Error("a refused commit changed the version already written")
	}
}
