package objstore_test

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/stream/objstore"
)

// hiveLake writes a small hive-partitioned demo lake (invented data) under a temporary folder:
// region=north with two days, region=süd (percent-escaped, as engines write it) with one, plus a
// _SUCCESS marker that listings skip. It returns the folder and every file's path relative to it.
func hiveLake(t *testing.T) (string, []string) {
	t.Helper()
	root := t.TempDir()
	o := synth.DefaultLoadOptions()
	o.Rows, o.RowGroup = 3000, 1000
	o.Start = time.Date(2026, 11, 28, 0, 0, 0, 0, time.UTC)
	for _, r := range []struct {
		dir  string
		days int
	}{{"region=north", 2}, {"region=s%C3%BCd", 1}} {
		o.Partitions = r.days
		o.Seed++
		if _, err := synth.WriteLoads(filepath.Join(root, "loads", r.dir), o); err != nil {
			t.Fatal(err)
		}
	}
	if err := os.WriteFile(filepath.Join(root, "loads", "_SUCCESS"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	var rel []string
	err := filepath.WalkDir(root, func(p string, e os.DirEntry, err error) error {
		if err == nil && !e.IsDir() {
			r, _ := filepath.Rel(root, p)
			rel = append(rel, filepath.ToSlash(r))
		}
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	return root, rel
}

// canonical is a JSON result with the paths and timings blanked, the only fields that may differ
// between the same files read from disk and from object storage.
func canonical(t *testing.T, r *kgauge.Result) []byte {
	t.Helper()
	c := *r
	c.Timings = kgauge.Timings{}
	c.Files = nil
	for _, f := range r.Files {
		f.Path = filepath.Base(f.Path)
		c.Files = append(c.Files, f)
	}
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetIndent("", " ")
	if err := enc.Encode(&c); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// TestEstimateOverS3 checks that an estimate over an s3:// prefix served by an S3 protocol server on
// 127.0.0.1 equals the estimate over the same files on disk (same JSON but paths and timings), with
// the hive partitions read from the keys, and that reading two of 24 columns fetches only part of
// the bytes (footers and the projected column chunks, not whole objects).
func TestEstimateOverS3(t *testing.T) {
	ctx := context.Background()
	root, rel := hiveLake(t)
	q := fakeS3(t, "lake")
	objects := map[string][]byte{}
	var total int64
	for _, r := range rel {
		data, err := os.ReadFile(filepath.Join(root, r))
		if err != nil {
			t.Fatal(err)
		}
		objects[r] = data
		total += int64(len(data))
	}
	objects["notes/readme.txt"] = []byte("not a lake file")
	put(t, q, "lake", objects)

	opt := kgauge.DefaultOptions()
	opt.Workers = 2
	opt.Criteria.MaxK = 6
	opt.Sketch.CoresetSize = 1000
	opt.Criteria.GapRefs = 5
	opt.Criteria.GapSample = 500
	opt.Criteria.Anchors = 200
	for _, tc := range []struct {
		name    string
		local   string
		remote  string
		columns []string
	}{
		{"prefix", filepath.Join(root, "loads"), "s3://lake/loads?" + q, nil},
		{"glob", filepath.Join(root, "loads", "*", "day=2026-11-2[89]"), "s3://lake/loads/*/day=2026-11-2[89]", nil},
		{"two columns", filepath.Join(root, "loads"), "s3://lake/loads/", []string{"h07", "h19"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			o := opt
			o.Columns = tc.columns
			want, _, err := kgauge.Estimate(ctx, []string{tc.local}, o)
			if err != nil {
				t.Fatal(err)
			}
			before := objstore.Default.Stats()
			got, _, err := kgauge.Estimate(ctx, []string{tc.remote}, o)
			if err != nil {
				t.Fatal(err)
			}
			fetched := objstore.Default.Stats().Bytes - before.Bytes
			if len(got.Files) != 3 {
				t.Fatalf("%d files from %s, want 3", len(got.Files), tc.remote)
			}
			for _, f := range got.Files {
				if !strings.HasPrefix(f.Path, "s3://lake/loads/region=") {
					t.Errorf("file path %q, want an s3://lake/loads/region=… URL", f.Path)
				}
				if f.Partition["region"] != "north" && f.Partition["region"] != "süd" || f.Partition["day"] == "" {
					t.Errorf("%s: partition %v, want region north or süd and a day", f.Path, f.Partition)
				}
			}
			if g, w := canonical(t, got), canonical(t, want); !bytes.Equal(g, w) {
				t.Errorf("result over S3 differs from the result on disk:\n%s\nwant\n%s", g, w)
			}
			if tc.columns != nil && fetched > total/2 {
				t.Errorf("reading 2 of 24 columns fetched %d of %d bytes, want less than half", fetched, total)
			}
			t.Logf("%s: fetched %d of %d object bytes", tc.name, fetched, total)
		})
	}

	// Bad inputs are one-line errors naming the URL once.
	for _, tc := range []struct{ url, want string }{
		{"s3://lake/nope/", "does not exist"},
		{"s3://lake/notes/readme.txt", "not a Parquet or Arrow IPC file"},
		{"s3://lake/notes/", "no Parquet or Arrow IPC data files"},
	} {
		_, _, err := kgauge.Estimate(ctx, []string{tc.url}, opt)
		if err == nil || strings.Count(err.Error(), tc.url) != 1 || !strings.Contains(err.Error(), tc.want) || strings.Contains(err.Error(), "\n") {
			t.Errorf("%s: error %v, want one line naming it once and saying %q", tc.url, err, tc.want)
		}
	}
}
