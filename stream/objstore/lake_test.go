package objstore_test

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/stream/lake/laketest"
)

// uploadTree puts every file below dir into the bucket under prefix.
func uploadTree(t *testing.T, q, bucket, dir, prefix string) {
	t.Helper()
	objects := map[string][]byte{}
	err := filepath.WalkDir(dir, func(p string, e os.DirEntry, err error) error {
		if err != nil || e.IsDir() {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		data, err := os.ReadFile(p)
		objects[prefix+"/"+filepath.ToSlash(rel)] = data
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	put(t, q, bucket, objects)
}

// TestLakeTablesOverS3 checks that a Delta table (log, checkpoint, deletion vectors) and an Iceberg
// table (manifests, position deletes; written by Apache iceberg-go) on the loopback S3 server give
// the same estimate as on disk, named by their root or by a partition folder, with the same table
// state in the output.
func TestLakeTablesOverS3(t *testing.T) {
	ctx := context.Background()
	const bucket = "lakehouse" // its own bucket: the store keeps a bucket's endpoint once named
	q := fakeS3(t, bucket)
	dir := t.TempDir()
	laketest.SalesTable(t, filepath.Join(dir, "sales"))
	uploadTree(t, q, bucket, filepath.Join(dir, "sales"), "sales")
	ice := filepath.Join("..", "lake", "testdata", "iceberg", "warehouse", "db", "meters")
	uploadTree(t, q, bucket, ice, "meters")

	opt := kgauge.DefaultOptions()
	opt.Workers = 2
	opt.Columns = []string{"x", "y"}
	opt.Criteria.MaxK = 4
	opt.Sketch.CoresetSize = 200
	opt.Criteria.GapRefs = 3
	opt.Criteria.GapSample = 100
	opt.Criteria.Anchors = 50
	posSnapshot := int64(4985199244698268960) // the fixture's snapshot with a position delete file
	for _, tc := range []struct {
		name, local, remote string
		snapshot            int64
		files               int
	}{
		{"delta root", filepath.Join(dir, "sales"), "s3://" + bucket + "/sales?" + q, 0, 2},
		{"delta partition", filepath.Join(dir, "sales", "day=2026-11-28"), "s3://" + bucket + "/sales/day=2026-11-28/", 0, 1},
		{"iceberg snapshot", ice, "s3://" + bucket + "/meters", posSnapshot, 2},
	} {
		t.Run(tc.name, func(t *testing.T) {
			o := opt
			o.Tables.Table.Snapshot = tc.snapshot
			want, _, err := kgauge.Estimate(ctx, []string{tc.local}, o)
			if err != nil {
				t.Fatal(err)
			}
			got, _, err := kgauge.Estimate(ctx, []string{tc.remote}, o)
			if err != nil {
				t.Fatal(err)
			}
			if len(got.Files) != tc.files || len(got.Tables) != 1 {
				t.Fatalf("%d files and %d tables from %s, want %d and 1", len(got.Files), len(got.Tables), tc.remote, tc.files)
			}
			for _, f := range got.Files {
				if !strings.HasPrefix(f.Path, "s3://"+bucket+"/") || f.Partition["day"] == "" {
					t.Errorf("file %s partition %v, want an s3:// URL with a day", f.Path, f.Partition)
				}
			}
			gt, wt := got.Tables[0], want.Tables[0]
			if gt.Format != wt.Format || gt.LiveFiles != wt.LiveFiles || gt.PresentFiles != wt.PresentFiles || gt.DeletedRows != wt.DeletedRows {
				t.Errorf("table over S3 %+v, on disk %+v", gt, wt)
			}
			got.Tables, want.Tables = nil, nil
			if g, w := canonical(t, got), canonical(t, want); !bytes.Equal(g, w) {
				t.Errorf("result over S3 differs from the result on disk:\n%s\nwant\n%s", g, w)
			}
		})
	}
}

// TestLakeTableEqualsLiveFilesOverS3 checks items 6 and 7 of issue 18 on the loopback S3 server:
// the estimate over a table equals the estimate over exactly its live files named as a list of
// objects, after a compaction and an overwrite (Delta versions 2 and 3) and after an append and a
// whole-day delete (Iceberg snapshots 2 and 3, written by Apache iceberg-go); and with deletes
// (Delta deletion vectors, Iceberg position deletes) the estimate holds exactly the live rows: the
// row count and the exact means equal those of the invented rows left (Delta) and of iceberg-go's
// own scan (Iceberg, expected.json).
func TestLakeTableEqualsLiveFilesOverS3(t *testing.T) {
	ctx := context.Background()
	const bucket = "livefiles"
	q := fakeS3(t, bucket)
	dir := t.TempDir()
	laketest.SalesTable(t, filepath.Join(dir, "sales"))
	uploadTree(t, q, bucket, filepath.Join(dir, "sales"), "sales")
	iceDir := filepath.Join("..", "lake", "testdata", "iceberg")
	uploadTree(t, q, bucket, filepath.Join(iceDir, "warehouse", "db", "meters"), "meters")
	var exp struct {
		Snapshots []struct {
			ID   int64   `json:"id"`
			Rows float64 `json:"rows"`
			SumX float64 `json:"sum_x"`
			SumY float64 `json:"sum_y"`
		} `json:"snapshots"`
	}
	raw, err := os.ReadFile(filepath.Join(iceDir, "expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, &exp); err != nil {
		t.Fatal(err)
	}

	opt := kgauge.DefaultOptions()
	opt.Workers = 2
	opt.Columns = []string{"x", "y"}
	opt.Criteria.MaxK = 4
	opt.Sketch.CoresetSize = 200
	opt.Criteria.GapRefs = 3
	opt.Criteria.GapSample = 100
	opt.Criteria.Anchors = 50
	// same blanks what may differ between a table and its files named as a list: timings, the
	// files' partitions (from the log or manifests, or from the keys) and the table summary.
	same := func(r *kgauge.Result) []byte {
		c := *r
		c.Tables = nil
		c.Files = nil
		for _, f := range r.Files {
			f.Partition = nil
			c.Files = append(c.Files, f)
		}
		return canonical(t, &c)
	}
	version := func(v int64) *int64 { return &v }
	for _, c := range []struct {
		name, prefix string
		version      *int64
		snapshot     int64
		files        int
	}{
		{"delta compaction", "sales", version(2), 0, 2},
		{"delta overwrite", "sales", version(3), 0, 2},
		{"iceberg append", "meters", nil, exp.Snapshots[1].ID, 3},
		{"iceberg day deleted", "meters", nil, exp.Snapshots[2].ID, 2},
	} {
		t.Run(c.name, func(t *testing.T) {
			o := opt
			o.Tables.Table.Version, o.Tables.Table.Snapshot = c.version, c.snapshot
			table, _, err := kgauge.Estimate(ctx, []string{"s3://" + bucket + "/" + c.prefix + "?" + q}, o)
			if err != nil {
				t.Fatal(err)
			}
			if len(table.Tables) != 1 || table.Tables[0].LiveFiles != c.files || table.Tables[0].PresentFiles <= c.files {
				t.Fatalf("tables %+v, want %d live files of more stored", table.Tables, c.files)
			}
			var list []string
			for _, f := range table.Files {
				list = append(list, f.Path+"?"+q)
			}
			files, _, err := kgauge.Estimate(ctx, list, opt)
			if err != nil {
				t.Fatal(err)
			}
			if g, w := same(table), same(files); !bytes.Equal(g, w) {
				t.Errorf("the table's estimate over S3 differs from its live objects':\n%s\nwant\n%s", g, w)
			}
		})
	}

	deleted := map[int64]bool{100: true, 101: true, 102: true, 103: true, 104: true, 105: true, 106: true,
		107: true, 108: true, 109: true, 250: true, 1003: true, 1004: true, 1059: true}
	var n, sx, sy float64
	for _, r := range append(laketest.Rows(100, 260), laketest.Rows(1000, 1060)...) {
		if !deleted[r.ID] {
			n, sx, sy = n+1, sx+r.X, sy+r.Y
		}
	}
	s := exp.Snapshots[3]
	for _, c := range []struct {
		name, prefix string
		snapshot     int64
		rows, sx, sy float64
		deleted      int64
	}{
		{"delta deletion vectors", "sales", 0, n, sx, sy, 14},
		{"iceberg position deletes", "meters", s.ID, s.Rows, s.SumX, s.SumY, 15},
	} {
		o := opt
		o.Tables.Table.Snapshot = c.snapshot
		r, _, err := kgauge.Estimate(ctx, []string{"s3://" + bucket + "/" + c.prefix + "?" + q}, o)
		if err != nil {
			t.Fatal(err)
		}
		if float64(r.Rows) != c.rows || r.SkippedRows != 0 || len(r.Tables) != 1 || r.Tables[0].DeletedRows != c.deleted {
			t.Errorf("%s: %d rows (%d skipped), tables %+v; want %v live rows, %d deleted", c.name, r.Rows, r.SkippedRows, r.Tables, c.rows, c.deleted)
			continue
		}
		for j, want := range []float64{c.sx / c.rows, c.sy / c.rows} {
			if got := r.Scaling.Center[j]; math.Abs(got-want) > 1e-9*max(1, math.Abs(want)) {
				t.Errorf("%s: mean of column %d is %v, the live rows' is %v", c.name, j, got, want)
			}
		}
	}
}
