package objstore_test

import (
	"bytes"
	"context"
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
