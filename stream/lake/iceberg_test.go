package lake_test

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/stream"
)

// icebergExpected is testdata/iceberg/expected.json: what Apache iceberg-go's own scan read from
// each snapshot of the fixture table its writer made (testdata/icegen, the command is in its doc).
type icebergExpected struct {
	Table     string `json:"table"`
	Snapshots []struct {
		ID        int64   `json:"id"`
		Rows      int64   `json:"rows"`
		SumX      float64 `json:"sum_x"`
		SumY      float64 `json:"sum_y"`
		DataFiles int     `json:"data_files"`
		PosDelete int     `json:"position_delete_files"`
		EqDelete  int     `json:"equality_delete_files"`
	} `json:"snapshots"`
}

func loadIcebergExpected(t testing.TB) icebergExpected {
	b, err := os.ReadFile(filepath.Join("testdata", "iceberg", "expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	var e icebergExpected
	if err := json.Unmarshal(b, &e); err != nil {
		t.Fatal(err)
	}
	return e
}

// copyTree copies the fixture table elsewhere, so that the test also shows that a table whose
// metadata names another location is read from where it is.
func copyTree(t testing.TB, from, to string) {
	t.Helper()
	err := filepath.Walk(from, func(p string, fi os.FileInfo, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(from, p)
		dst := filepath.Join(to, rel)
		if fi.IsDir() {
			return os.MkdirAll(dst, 0o755)
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		return os.WriteFile(dst, b, 0o644)
	})
	if err != nil {
		t.Fatal(err)
	}
}

// sums reads x and y of every live row through stream.Open.
func sums(t testing.TB, files []stream.File) (rows int64, sx, sy float64) {
	t.Helper()
	ds, err := stream.Open(files, stream.Options{Columns: []string{"x", "y"}})
	if err != nil {
		t.Fatal(err)
	}
	defer ds.Close()
	for _, u := range ds.Units {
		r, err := ds.OpenUnit(u)
		if err != nil {
			t.Fatal(err)
		}
		buf := make([]float64, 2*64)
		for {
			n, err := r.Read(buf)
			for i := 0; i < n; i++ {
				sx += buf[2*i]
				sy += buf[2*i+1]
			}
			rows += int64(n)
			if err != nil {
				break
			}
		}
		r.Close()
	}
	if rows != ds.Rows {
		t.Errorf("read %d rows, the dataset announced %d", rows, ds.Rows)
	}
	return rows, sx, sy
}

func TestIcebergSnapshots(t *testing.T) {
	exp := loadIcebergExpected(t)
	root := filepath.Join(t.TempDir(), "meters")
	copyTree(t, filepath.Join("testdata", "iceberg", filepath.FromSlash(exp.Table)), root)
	for i, s := range exp.Snapshots {
		files, tables, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{Snapshot: s.ID}})
		if s.EqDelete > 0 {
			if err == nil || !strings.Contains(err.Error(), `"equality deletes"`) {
				t.Errorf("snapshot %d with equality deletes: %v, want an error naming the feature", s.ID, err)
			}
			continue
		}
		if err != nil {
			t.Fatalf("snapshot %d: %v", s.ID, err)
		}
		tb := tables[0]
		if tb.Format != "iceberg" || tb.Version != s.ID || tb.Live != s.DataFiles {
			t.Errorf("snapshot %d: table %s version %d with %d live files, want iceberg %d with %d", i, tb.Format, tb.Version, tb.Live, s.ID, s.DataFiles)
		}
		// Five Parquet files are stored: three data files, a position and an equality delete
		// file. Delete files the snapshot knows are not counted as data.
		if want := 5 - s.PosDelete; tb.Present != want {
			t.Errorf("snapshot %d: %d data files present, want %d", i, tb.Present, want)
		}
		for _, f := range files {
			day := filepath.Base(filepath.Dir(f.Path))
			if len(f.Partition) != 1 || "day="+f.Partition[0].Value != day {
				t.Errorf("%s: partition %v from the manifest, want %s", f.Path, f.Partition, day)
			}
		}
		rows, sx, sy := sums(t, files)
		if rows != s.Rows || math.Abs(sx-s.SumX) > 1e-9*math.Abs(s.SumX) || sx != sx || math.Abs(sy-s.SumY) > 1e-9 {
			t.Errorf("snapshot %d: %d rows, sums %v %v; iceberg-go read %d rows, sums %v %v", s.ID, rows, sx, sy, s.Rows, s.SumX, s.SumY)
		}
	}
	// The current snapshot is the last one, which has equality deletes: refused.
	if _, _, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{}}); err == nil || !strings.Contains(err.Error(), "equality deletes") {
		t.Errorf("current snapshot: %v, want the equality deletes refused", err)
	}
	// A partition folder and a filter of the snapshot with position deletes.
	pos := exp.Snapshots[3]
	for _, c := range []struct {
		path  string
		where []stream.KeyValue
	}{
		{filepath.Join(root, "data", "day=2026-11-28"), nil},
		{root, []stream.KeyValue{{Key: "day", Value: "2026-11-28"}}},
	} {
		files, tables, err := stream.DiscoverTables([]string{c.path}, stream.DiscoverOptions{Table: stream.TableOptions{Snapshot: pos.ID, Where: c.where}})
		if err != nil {
			t.Fatal(err)
		}
		if rows, _, _ := sums(t, files); rows != pos.Rows || tables[0].DeletedRows != 15 {
			t.Errorf("%s %v: %d rows (%d deleted), want %d (15)", c.path, c.where, rows, tables[0].DeletedRows, pos.Rows)
		}
	}
	if _, _, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{Snapshot: 42}}); err == nil || !strings.Contains(err.Error(), "no snapshot 42") {
		t.Errorf("snapshot 42: %v", err)
	}
	if _, _, err := stream.DiscoverTables([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{Version: ver(3)}}); err == nil || !strings.Contains(err.Error(), "--table-version is for Delta") {
		t.Errorf("--table-version on Iceberg: %v", err)
	}
}
