package lake_test

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/stream"
	_ "github.com/kgauge/kgauge/stream/lake"
	"github.com/kgauge/kgauge/stream/lake/laketest"
)

// readIDs reads every live row's (id, x, y) through stream.Open, the path kgauge's pass uses.
func readIDs(t testing.TB, files []stream.File) map[int64][2]float64 {
	t.Helper()
	ds, err := stream.Open(files, stream.Options{Columns: []string{"id", "x", "y"}})
	if err != nil {
		t.Fatal(err)
	}
	defer ds.Close()
	got := map[int64][2]float64{}
	var n int64
	for _, u := range ds.Units {
		r, err := ds.OpenUnit(u)
		if err != nil {
			t.Fatal(err)
		}
		buf := make([]float64, 3*16)
		for {
			k, err := r.Read(buf)
			for i := 0; i < k; i++ {
				id := int64(buf[3*i])
				if _, dup := got[id]; dup {
					t.Errorf("row id %d read twice", id)
				}
				got[id] = [2]float64{buf[3*i+1], buf[3*i+2]}
			}
			n += int64(k)
			if err != nil {
				break
			}
		}
		r.Close()
	}
	if n != ds.Rows {
		t.Errorf("read %d rows, the dataset announced %d live rows", n, ds.Rows)
	}
	return got
}

func ver(v int64) *int64 { return &v }

func idSet(ranges ...[2]int64) []int64 {
	var out []int64
	for _, r := range ranges {
		for id := r[0]; id < r[1]; id++ {
			out = append(out, id)
		}
	}
	return out
}

func without(ids []int64, drop ...int64) []int64 {
	return slices.DeleteFunc(slices.Clone(ids), func(id int64) bool { return slices.Contains(drop, id) })
}

func TestDeltaVersions(t *testing.T) {
	root := filepath.Join(t.TempDir(), "sales")
	laketest.SalesTable(t, root)
	live4 := without(idSet([2]int64{100, 260}, [2]int64{1000, 1060}),
		100, 101, 102, 103, 104, 105, 106, 107, 108, 109, 250, 1003, 1004, 1059)
	cases := []struct {
		name    string
		path    string
		opt     stream.TableOptions
		files   []string
		ids     []int64
		present int
	}{
		{"latest", root, stream.TableOptions{}, []string{"day=2026-11-27/e.parquet", "day=2026-11-28/d.parquet"}, live4, 6},
		{"v0", root, stream.TableOptions{Version: ver(0)}, []string{"day=2026-11-27/a.parquet", "day=2026-11-28/b.parquet"}, idSet([2]int64{0, 180}), 6},
		{"v1", root, stream.TableOptions{Version: ver(1)}, []string{"day=2026-11-27/a.parquet", "day=2026-11-28/b.parquet", "day=2026-11-28/c.parquet"}, idSet([2]int64{0, 260}), 6},
		{"v2 compaction (checkpoint)", root, stream.TableOptions{Version: ver(2)}, []string{"day=2026-11-27/a.parquet", "day=2026-11-28/d.parquet"}, idSet([2]int64{0, 260}), 6},
		{"v3 overwrite", root, stream.TableOptions{Version: ver(3)}, []string{"day=2026-11-27/e.parquet", "day=2026-11-28/d.parquet"}, idSet([2]int64{100, 260}, [2]int64{1000, 1060}), 6},
		{"partition folder", filepath.Join(root, "day=2026-11-28"), stream.TableOptions{}, []string{"day=2026-11-28/d.parquet"}, without(idSet([2]int64{100, 260}), 100, 101, 102, 103, 104, 105, 106, 107, 108, 109, 250), 4},
		{"where", root, stream.TableOptions{Where: []stream.KeyValue{{Key: "day", Value: "2026-11-27"}}}, []string{"day=2026-11-27/e.parquet"}, without(idSet([2]int64{1000, 1060}), 1003, 1004, 1059), 6},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			files, tables, err := stream.DiscoverTables([]string{c.path}, stream.DiscoverOptions{Table: c.opt})
			if err != nil {
				t.Fatal(err)
			}
			if len(tables) != 1 || tables[0].Format != "delta" || tables[0].Root != root {
				t.Fatalf("tables = %+v, want the Delta table at %s", tables, root)
			}
			tb := tables[0]
			want := int64(4) // the latest
			if c.opt.Version != nil {
				want = *c.opt.Version
			}
			if tb.Version != want {
				t.Errorf("version %d, want %d", tb.Version, want)
			}
			var rels []string
			for _, f := range files {
				rel, _ := filepath.Rel(root, f.Path)
				rels = append(rels, filepath.ToSlash(rel))
				day := strings.TrimPrefix(strings.Split(filepath.ToSlash(rel), "/")[0], "day=")
				if len(f.Partition) != 1 || f.Partition[0] != (stream.KeyValue{Key: "day", Value: day}) {
					t.Errorf("%s: partition %v, want day=%s from the log", rel, f.Partition, day)
				}
			}
			if !slices.Equal(rels, c.files) {
				t.Errorf("live files %v, want %v", rels, c.files)
			}
			if tb.Live != len(c.files) || tb.Present != c.present {
				t.Errorf("live/present = %d/%d, want %d/%d", tb.Live, tb.Present, len(c.files), c.present)
			}
			got := readIDs(t, files)
			if len(got) != len(c.ids) {
				t.Errorf("read %d rows, want %d", len(got), len(c.ids))
			}
			for _, id := range c.ids {
				v, ok := got[id]
				want := laketest.Rows(id, id+1)[0]
				if !ok || v != [2]float64{want.X, want.Y} {
					t.Errorf("row %d: got %v (present %v), want %v %v", id, v, ok, want.X, want.Y)
					break
				}
			}
		})
	}
}

// TestDeltaCheckpointOnly checks a log whose early commits were cleaned up: versions from the
// checkpoint on read through it (multi-part here), earlier ones are an error.
func TestDeltaCheckpointOnly(t *testing.T) {
	root := filepath.Join(t.TempDir(), "t")
	b := laketest.NewDelta(t, root)
	b.File("p1.parquet", laketest.Rows(0, 10))
	b.File("p2.parquet", laketest.Rows(10, 20))
	b.Commit(laketest.Protocol(1), laketest.Meta(nil), laketest.Add("p1.parquet", "x", b.Size["p1.parquet"], nil))
	b.Commit(laketest.Add("p2.parquet", "x", b.Size["p2.parquet"], nil))
	b.Checkpoint(3, map[string]string{"p1.parquet": "x", "p2.parquet": "x"}, nil, nil)
	b.File("p3.parquet", laketest.Rows(20, 30))
	b.Commit(laketest.Remove("p1.parquet", true, nil), laketest.Add("p3.parquet", "x", b.Size["p3.parquet"], nil))
	for _, v := range []int{0, 1} {
		if err := os.Remove(filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.json", v))); err != nil {
			t.Fatal(err)
		}
	}
	files, tables, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{}})
	if err != nil {
		t.Fatal(err)
	}
	if tables[0].Version != 2 || len(files) != 2 || filepath.Base(files[0].Path) != "p2.parquet" || filepath.Base(files[1].Path) != "p3.parquet" {
		t.Errorf("got version %d files %v, want 2 and p2, p3", tables[0].Version, files)
	}
	if got := readIDs(t, files); len(got) != 20 {
		t.Errorf("read %d rows, want 20", len(got))
	}
	_, _, err = stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{Version: ver(0)}})
	if err == nil || !strings.Contains(err.Error(), "commit 0 is missing") {
		t.Errorf("version 0 after clean-up: %v, want an error saying commit 0 is missing", err)
	}
	_, _, err = stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{Version: ver(9)}})
	if err == nil || !strings.Contains(err.Error(), "version 9 does not exist (latest is 2)") {
		t.Errorf("version 9: %v", err)
	}
	// A multi-part checkpoint with a missing part is ignored; without commits 0 and 1 the table
	// then cannot be read.
	if err := os.Remove(filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.checkpoint.%010d.%010d.parquet", 1, 2, 3))); err != nil {
		t.Fatal(err)
	}
	if _, _, err = stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{}}); err == nil {
		t.Error("a checkpoint with a missing part was used")
	}
}

// TestDeltaRefusesFeatures checks that reader features kgauge does not implement stop the run
// with one line naming the feature.
func TestDeltaRefusesFeatures(t *testing.T) {
	cases := []struct {
		name     string
		protocol map[string]any
		conf     map[string]string
		want     string
	}{
		{"column mapping v2", laketest.Protocol(2), map[string]string{"delta.columnMapping.mode": "name"}, `reader feature "columnMapping" (mode "name")`},
		{"column mapping v3", laketest.Protocol(3, "columnMapping"), map[string]string{"delta.columnMapping.mode": "id"}, `reader feature "columnMapping" (mode "id")`},
		{"unknown feature", laketest.Protocol(3, "deletionVectors", "catalogManaged"), nil, `reader feature "catalogManaged"`},
		{"reader version 4", map[string]any{"protocol": map[string]any{"minReaderVersion": 4, "minWriterVersion": 7}}, nil, "reader version 4"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			root := filepath.Join(t.TempDir(), "t")
			b := laketest.NewDelta(t, root)
			b.File("p.parquet", laketest.Rows(0, 10))
			b.Commit(c.protocol, laketest.Meta(c.conf), laketest.Add("p.parquet", "x", b.Size["p.parquet"], nil))
			_, _, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{}})
			if err == nil || !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
				t.Fatalf("got %v, want one line containing %s", err, c.want)
			}
			// Column mapping "none" is plain reading.
			if strings.HasPrefix(c.name, "column mapping") {
				root2 := filepath.Join(t.TempDir(), "t")
				b2 := laketest.NewDelta(t, root2)
				b2.File("p.parquet", laketest.Rows(0, 10))
				b2.Commit(c.protocol, laketest.Meta(map[string]string{"delta.columnMapping.mode": "none"}), laketest.Add("p.parquet", "x", b2.Size["p.parquet"], nil))
				if _, _, err := stream.DiscoverTables([]string{root2}, stream.DiscoverOptions{Table: stream.TableOptions{}}); err != nil {
					t.Errorf("column mapping mode none: %v", err)
				}
			}
		})
	}
}

// TestDeltaAsFiles checks that --as-files reads every data file of the folder, as before.
func TestDeltaAsFiles(t *testing.T) {
	root := filepath.Join(t.TempDir(), "sales")
	laketest.SalesTable(t, root)
	files, tables, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{AsFiles: true, Table: stream.TableOptions{}})
	if err != nil {
		t.Fatal(err)
	}
	if len(tables) != 0 || len(files) != 6 {
		t.Errorf("as files: %d tables, %d files, want 0 and 6", len(tables), len(files))
	}
	for _, f := range files {
		if f.Deleted != nil {
			t.Errorf("%s: deletes applied to a plain file", f.Path)
		}
	}
}

// TestDeletionVectorInlineExample decodes the inline deletion vector of the Delta protocol's own
// JSON Example 3 (PROTOCOL.md, "Deletion Vectors"): it marks rows 3, 4, 7, 11, 18 and 29.
func TestDeletionVectorInlineExample(t *testing.T) {
	root := filepath.Join(t.TempDir(), "t")
	b := laketest.NewDelta(t, root)
	b.File("p.parquet", laketest.Rows(0, 40))
	dv := map[string]any{"storageType": "i", "pathOrInlineDv": "wi5b=000010000siXQKl0rr91000f55c8Xg0@@D72lkbi5=-{L",
		"sizeInBytes": 40, "cardinality": 6}
	b.Commit(laketest.Protocol(3, "deletionVectors"), laketest.Meta(nil), laketest.Add("p.parquet", "x", b.Size["p.parquet"], dv))
	files, _, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{}})
	if err != nil {
		t.Fatal(err)
	}
	if got := files[0].Deleted.ToArray(); !slices.Equal(got, []uint64{3, 4, 7, 11, 18, 29}) {
		t.Errorf("deleted rows %v, want 3 4 7 11 18 29", got)
	}
	got := readIDs(t, files)
	for _, id := range []int64{3, 4, 7, 11, 18, 29} {
		if _, ok := got[id]; ok {
			t.Errorf("deleted row %d was read", id)
		}
	}
	if len(got) != 34 {
		t.Errorf("read %d rows, want 34", len(got))
	}
	// A vector whose cardinality disagrees with its descriptor is refused.
	dv["cardinality"] = 5
	root2 := filepath.Join(t.TempDir(), "t")
	b2 := laketest.NewDelta(t, root2)
	b2.File("p.parquet", laketest.Rows(0, 40))
	b2.Commit(laketest.Protocol(3, "deletionVectors"), laketest.Meta(nil), laketest.Add("p.parquet", "x", b2.Size["p.parquet"], dv))
	if _, _, err := stream.DiscoverTables([]string{root2}, stream.DiscoverOptions{Table: stream.TableOptions{}}); err == nil || !strings.Contains(err.Error(), "descriptor says 5") {
		t.Errorf("bad cardinality: %v", err)
	}
}

// TestDeltaV2Checkpoint reads a table whose early commits were cleaned up behind a UUID-named v2
// checkpoint whose files are in a sidecar.
func TestDeltaV2Checkpoint(t *testing.T) {
	root := filepath.Join(t.TempDir(), "t")
	b := laketest.NewDelta(t, root)
	b.File("day=1/p1.parquet", laketest.Rows(0, 10))
	b.File("day=2/p2.parquet", laketest.Rows(10, 30))
	b.Commit(laketest.Protocol(3, "v2Checkpoint"), laketest.Meta(nil),
		laketest.Add("day=1/p1.parquet", "1", b.Size["day=1/p1.parquet"], nil),
		laketest.Add("day=2/p2.parquet", "2", b.Size["day=2/p2.parquet"], nil))
	b.V2Checkpoint(map[string]string{"day=1/p1.parquet": "1", "day=2/p2.parquet": "2"})
	b.File("day=2/p3.parquet", laketest.Rows(30, 35))
	b.Commit(laketest.Remove("day=1/p1.parquet", true, nil), laketest.Add("day=2/p3.parquet", "2", b.Size["day=2/p3.parquet"], nil))
	if err := os.Remove(filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.json", 0))); err != nil {
		t.Fatal(err)
	}
	files, tables, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if tables[0].Version != 1 || len(files) != 2 || files[0].Partition[0].Value != "2" {
		t.Fatalf("version %d, files %+v; want version 1 with p2 and p3 in day 2", tables[0].Version, files)
	}
	if got := readIDs(t, files); len(got) != 25 {
		t.Errorf("read %d rows, want 25", len(got))
	}
}

// TestDeltaBadLogs checks that broken logs and deletion vectors are one-line errors naming the
// file, never a panic or a silent misread.
func TestDeltaBadLogs(t *testing.T) {
	good := func(t *testing.T) (string, *laketest.Delta) {
		root := filepath.Join(t.TempDir(), "t")
		b := laketest.NewDelta(t, root)
		b.File("p.parquet", laketest.Rows(0, 40))
		return root, b
	}
	for _, tc := range []struct {
		name  string
		build func(t *testing.T) string
		want  string
	}{
		{"bad JSON line", func(t *testing.T) string {
			root, b := good(t)
			b.Commit(laketest.Protocol(1), laketest.Meta(nil), laketest.Add("p.parquet", "x", b.Size["p.parquet"], nil))
			f := filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.json", 0))
			data, _ := os.ReadFile(f)
			os.WriteFile(f, append(data, []byte("{\"add\": {\"path\": \n")...), 0o644)
			return root
		}, "00000000000000000000.json: line 5"},
		{"garbage checkpoint", func(t *testing.T) string {
			root, b := good(t)
			b.Commit(laketest.Protocol(1), laketest.Meta(nil), laketest.Add("p.parquet", "x", b.Size["p.parquet"], nil))
			os.WriteFile(filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.checkpoint.parquet", 0)), []byte("PAR1 not really PAR1"), 0o644)
			os.Remove(filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.json", 0)))
			return root
		}, "checkpoint.parquet"},
		{"missing commit", func(t *testing.T) string {
			root, b := good(t)
			b.Commit(laketest.Protocol(1), laketest.Meta(nil), laketest.Add("p.parquet", "x", b.Size["p.parquet"], nil))
			b.Commit()
			b.Commit()
			os.Remove(filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.json", 1)))
			return root
		}, "commit 1 is missing"},
		{"no protocol", func(t *testing.T) string {
			root, b := good(t)
			b.Commit(laketest.Add("p.parquet", "x", b.Size["p.parquet"], nil))
			return root
		}, "no protocol or metaData action"},
		{"random inline vector", func(t *testing.T) string {
			root, b := good(t)
			dv := map[string]any{"storageType": "i", "pathOrInlineDv": laketest.Z85Encode([]byte("\xd1\xd3\x39\x64\xff\xff\xff\xff\xff\xff\xff\x7f")), "sizeInBytes": 12, "cardinality": 1}
			b.Commit(laketest.Protocol(3, "deletionVectors"), laketest.Meta(nil), laketest.Add("p.parquet", "x", b.Size["p.parquet"], dv))
			return root
		}, "deletion vector"},
		{"vector file with a bad CRC", func(t *testing.T) string {
			root, b := good(t)
			dv := laketest.DVFile(t, root, "", [16]byte{1, 2, 3}, 1, 2)
			name := fmt.Sprintf("deletion_vector_%x-%x-%x-%x-%x.bin", []byte{1, 2, 3, 0}, []byte{0, 0}, []byte{0, 0}, []byte{0, 0}, make([]byte, 6))
			f := filepath.Join(root, name)
			data, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			data[len(data)-1] ^= 1
			os.WriteFile(f, data, 0o644)
			b.Commit(laketest.Protocol(3, "deletionVectors"), laketest.Meta(nil), laketest.Add("p.parquet", "x", b.Size["p.parquet"], dv))
			return root
		}, "CRC-32"},
		{"vector beyond the file", func(t *testing.T) string {
			root, b := good(t)
			data := laketest.DVBytes(t, 3, 40)
			dv := map[string]any{"storageType": "i", "pathOrInlineDv": laketest.Z85Encode(data), "sizeInBytes": len(data), "cardinality": 2}
			b.Commit(laketest.Protocol(3, "deletionVectors"), laketest.Meta(nil), laketest.Add("p.parquet", "x", b.Size["p.parquet"], dv))
			return root
		}, "deletes row 40 of a file with 40 rows"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			root := tc.build(t)
			files, _, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{})
			if err == nil {
				_, err = stream.Open(files, stream.Options{})
			}
			if err == nil || !strings.Contains(err.Error(), tc.want) || strings.Contains(err.Error(), "\n") {
				t.Errorf("got %v, want one line containing %q", err, tc.want)
			}
		})
	}
}
