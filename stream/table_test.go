package stream_test

import (
	"errors"
	"os"
	"path/filepath"
	"testing"

	"github.com/kgauge/kgauge/stream"
)

// TestWhereOnHiveFolders checks --where on plain folders: files are kept by their KEY=VALUE path
// segments, every pair must hold, and a filter nothing matches is an error wrapping ErrNoMatch.
func TestWhereOnHiveFolders(t *testing.T) {
	root := t.TempDir()
	g := newGen(50, 1)
	for _, dir := range []string{"region=north/day=1", "region=north/day=2", "region=s%C3%BCd/day=1"} {
		p := filepath.Join(root, filepath.FromSlash(dir))
		if err := os.MkdirAll(p, 0o755); err != nil {
			t.Fatal(err)
		}
		writePGo(t, filepath.Join(p, "part-0.parquet"), g)
	}
	for _, tc := range []struct {
		where []stream.KeyValue
		want  []string
	}{
		{nil, []string{"region=north/day=1", "region=north/day=2", "region=s%C3%BCd/day=1"}},
		{[]stream.KeyValue{{Key: "day", Value: "1"}}, []string{"region=north/day=1", "region=s%C3%BCd/day=1"}},
		{[]stream.KeyValue{{Key: "day", Value: "1"}, {Key: "region", Value: "süd"}}, []string{"region=s%C3%BCd/day=1"}},
	} {
		files, tables, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{Where: tc.where}})
		if err != nil {
			t.Fatal(err)
		}
		if len(tables) != 0 || len(files) != len(tc.want) {
			t.Fatalf("%v: %d files, %d tables, want %v", tc.where, len(files), len(tables), tc.want)
		}
		for i, f := range files {
			if rel, _ := filepath.Rel(root, filepath.Dir(f.Path)); filepath.ToSlash(rel) != tc.want[i] {
				t.Errorf("%v: file %d is in %s, want %s", tc.where, i, rel, tc.want[i])
			}
		}
	}
	_, _, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{Where: []stream.KeyValue{{Key: "day", Value: "3"}}}})
	if !errors.Is(err, stream.ErrNoMatch) {
		t.Errorf("no match: %v, want ErrNoMatch", err)
	}
}
