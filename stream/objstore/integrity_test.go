package objstore_test

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/stream"
	_ "github.com/kgauge/kgauge/stream/objstore"
)

// TestObjectIdentity: an object named twice (by its URL and by a prefix) is taken once; it
// carries its ETag, and its content identity is its key and ETag. A truncated object below a
// prefix is an unreadable file, as on disk.
func TestObjectIdentity(t *testing.T) {
	q := fakeS3(t, "idlake")
	o := synth.DefaultLoadOptions()
	o.Rows, o.RowGroup, o.Partitions = 200, 200, 1
	o.Start = time.Date(2026, 11, 28, 0, 0, 0, 0, time.UTC)
	dir := t.TempDir()
	if _, err := synth.WriteLoads(dir, o); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(filepath.Join(dir, "day=2026-11-28", "part-000.parquet"))
	if err != nil {
		t.Fatal(err)
	}
	put(t, q, "idlake", map[string][]byte{"loads/day=2026-11-28/part-000.parquet": data})
	one := "s3://idlake/loads/day=2026-11-28/part-000.parquet?" + q
	files, err := stream.Discover([]string{one, "s3://idlake/loads/?" + q})
	if err != nil {
		t.Fatal(err)
	}
	if len(files) != 1 || files[0].ETag == "" {
		t.Fatalf("files %+v; want the object once, with its ETag", files)
	}
	id, err := stream.ContentID(files[0])
	if err != nil || !strings.HasPrefix(id, "etag:"+files[0].ETag+":") || !strings.HasSuffix(id, "loads/day=2026-11-28/part-000.parquet") {
		t.Errorf("content id %q (%v); want etag:ETAG:KEY", id, err)
	}
	put(t, q, "idlake", map[string][]byte{"loads/day=2026-11-29/part-000.parquet": data[:len(data)/2]})
	d, err := stream.DiscoverWith([]string{"s3://idlake/loads/?" + q}, stream.DiscoverOptions{SkipUnreadable: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(d.Files) != 1 || len(d.Skipped) != 1 || !strings.Contains(d.Skipped[0].Path, "day=2026-11-29") {
		t.Errorf("files %d, skipped %+v; want the cut object skipped", len(d.Files), d.Skipped)
	}
}
