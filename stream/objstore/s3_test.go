package objstore_test

import (
	"bytes"
	"context"
	"errors"
	"io"
	"io/fs"
	"math/rand/v2"
	"net/http/httptest"
	"path/filepath"
	"strings"
	"testing"

	"github.com/johannesboyne/gofakes3"
	"github.com/johannesboyne/gofakes3/backend/s3mem"
	"github.com/kgauge/kgauge/stream/objstore"
	"gocloud.dev/blob"
)

// fakeS3 starts an in-process S3 server on 127.0.0.1 with one empty bucket and returns the query
// that points s3blob at it. The credentials are dummies set for this test only.
func fakeS3(t testing.TB, bucket string) string {
	t.Helper()
	backend := s3mem.New()
	if err := backend.CreateBucket(bucket); err != nil {
		t.Fatal(err)
	}
	srv := httptest.NewServer(gofakes3.New(backend).Server()) // listens on 127.0.0.1
	t.Cleanup(srv.Close)
	home := t.TempDir()
	for k, v := range map[string]string{
		"AWS_ACCESS_KEY_ID": "kgauge-test", "AWS_SECRET_ACCESS_KEY": "kgauge-test", "AWS_SESSION_TOKEN": "",
		"AWS_PROFILE": "", "AWS_CONFIG_FILE": filepath.Join(home, "config"),
		"AWS_SHARED_CREDENTIALS_FILE": filepath.Join(home, "credentials"), "AWS_EC2_METADATA_DISABLED": "true",
		"AWS_REQUEST_CHECKSUM_CALCULATION": "when_required", "AWS_RESPONSE_CHECKSUM_VALIDATION": "when_required",
	} {
		t.Setenv(k, v)
	}
	return "endpoint=" + srv.URL + "&use_path_style=true&region=us-east-1&disable_https=true"
}

// put uploads objects (key → content) through gocloud.dev, as a lake writer would.
func put(t testing.TB, query, bucket string, objects map[string][]byte) {
	t.Helper()
	ctx := context.Background()
	b, err := blob.OpenBucket(ctx, "s3://"+bucket+"?"+query)
	if err != nil {
		t.Fatal(err)
	}
	defer b.Close()
	for k, v := range objects {
		if err := b.WriteAll(ctx, k, v, nil); err != nil {
			t.Fatalf("put %s: %v", k, err)
		}
	}
}

func TestParse(t *testing.T) {
	for _, tc := range []struct {
		in                         string
		scheme, bucket, key, query string
		bad                        bool
	}{
		{in: "s3://lake/loads/day=1/part-0.parquet", scheme: "s3", bucket: "lake", key: "loads/day=1/part-0.parquet"},
		{in: "s3://lake/loads/?region=eu-west-1&use_path_style=true", scheme: "s3", bucket: "lake", key: "loads/", query: "region=eu-west-1&use_path_style=true"},
		{in: "s3://lake/part-?.parquet", scheme: "s3", bucket: "lake", key: "part-?.parquet"},
		{in: "s3://lake/part-?.parquet?endpoint=http://127.0.0.1:9", scheme: "s3", bucket: "lake", key: "part-?.parquet", query: "endpoint=http://127.0.0.1:9"},
		{in: "gs://b", scheme: "gs", bucket: "b"},
		{in: "azblob://c/region=s%C3%BCd/x", scheme: "azblob", bucket: "c", key: "region=s%C3%BCd/x"},
		{in: "s3:///key", bad: true},
		{in: "lake/loads", bad: true},
		{in: "/abs/path/day=1", bad: true},
	} {
		l, err := objstore.Parse(tc.in)
		if tc.bad {
			if err == nil {
				t.Errorf("%s: parsed as %+v, want an error", tc.in, l)
			}
			continue
		}
		if err != nil || l.Scheme != tc.scheme || l.Bucket != tc.bucket || l.Key != tc.key || l.Query != tc.query {
			t.Errorf("%s: got %+v, %v; want %s %s %s %s", tc.in, l, err, tc.scheme, tc.bucket, tc.key, tc.query)
		}
	}
}

func TestList(t *testing.T) {
	q := fakeS3(t, "lake")
	put(t, q, "lake", map[string][]byte{
		"loads/day=2026-11-28/part-000.parquet":      []byte("a"),
		"loads/day=2026-11-29/part-000.parquet":      []byte("bb"),
		"loads/day=2026-11-29/part-001.parquet":      []byte("ccc"),
		"loads/day=2026-11-29/.part-001.parquet.crc": []byte("x"),
		"loads/_SUCCESS": nil,
		"loads/_temporary/day=2026-11-30/part.parquet": []byte("x"),
		"loads/region=n/day=2026-11-28/p.parquet":      []byte("dddd"),
		"other/x.parquet": []byte("e"),
	})
	s := &objstore.Store{}
	t.Cleanup(func() { s.Close() })
	for _, tc := range []struct {
		pattern string
		want    []string
	}{
		{"s3://lake/loads?" + q, []string{"loads/day=2026-11-28/part-000.parquet", "loads/day=2026-11-29/part-000.parquet",
			"loads/day=2026-11-29/part-001.parquet", "loads/region=n/day=2026-11-28/p.parquet"}},
		{"s3://lake/loads/day=*", []string{"loads/day=2026-11-28/part-000.parquet", "loads/day=2026-11-29/part-000.parquet",
			"loads/day=2026-11-29/part-001.parquet"}},
		{"s3://lake/**/day=2026-11-28/*.parquet", []string{"loads/day=2026-11-28/part-000.parquet", "loads/region=n/day=2026-11-28/p.parquet"}},
		{"s3://lake/loads/day=2026-11-29/part-00?.parquet", []string{"loads/day=2026-11-29/part-000.parquet", "loads/day=2026-11-29/part-001.parquet"}},
		{"s3://lake/other/x.parquet", []string{"other/x.parquet"}},
		{"s3://lake/", []string{"loads/day=2026-11-28/part-000.parquet", "loads/day=2026-11-29/part-000.parquet",
			"loads/day=2026-11-29/part-001.parquet", "loads/region=n/day=2026-11-28/p.parquet", "other/x.parquet"}},
	} {
		got, err := s.List(tc.pattern)
		if err != nil {
			t.Errorf("%s: %v", tc.pattern, err)
			continue
		}
		var keys []string
		for _, o := range got {
			keys = append(keys, o.Key)
			if o.Path != "s3://lake/"+o.Key {
				t.Errorf("%s: path %q for key %q", tc.pattern, o.Path, o.Key)
			}
		}
		if strings.Join(keys, " ") != strings.Join(tc.want, " ") {
			t.Errorf("%s:\n got %v\nwant %v", tc.pattern, keys, tc.want)
		}
	}
	one, err := s.List("s3://lake/loads/day=2026-11-29/part-001.parquet")
	if err != nil || len(one) != 1 || !one[0].Explicit || one[0].Size != 3 {
		t.Errorf("an object named exactly: %+v, %v; want it alone, explicit, 3 bytes", one, err)
	}
	if _, err := s.List("s3://lake/nothing/here"); !errors.Is(err, fs.ErrNotExist) || !strings.Contains(err.Error(), "s3://lake/nothing/here") {
		t.Errorf("a missing prefix: error %v, want one naming it and wrapping fs.ErrNotExist", err)
	}
	if _, err := s.List("s3://lake/loads/[day"); err == nil || !strings.Contains(err.Error(), "bad glob") {
		t.Errorf("a bad glob: error %v", err)
	}
	if _, err := s.Open("s3://lake/loads/missing.parquet"); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("opening a missing object: error %v, want fs.ErrNotExist", err)
	}
}

// TestReaderRanges checks the reader's bytes against the object at random ranges and its requests:
// a small read far from the last one fetches MinFetch bytes only, sequential reads grow the fetch
// to the block size, and cached ranges cost no request.
func TestReaderRanges(t *testing.T) {
	q := fakeS3(t, "lake")
	data := make([]byte, 20<<20+12345)
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range data {
		data[i] = byte(rng.Uint32())
	}
	put(t, q, "lake", map[string][]byte{"big.bin": data})
	s := &objstore.Store{}
	t.Cleanup(func() { s.Close() })
	if _, err := s.List("s3://lake/big.bin?" + q); err != nil {
		t.Fatal(err)
	}
	h, err := s.OpenContext(context.Background(), "s3://lake/big.bin")
	if err != nil {
		t.Fatal(err)
	}
	defer h.Close()
	if h.Size() != int64(len(data)) {
		t.Fatalf("size %d, want %d", h.Size(), len(data))
	}

	// A footer-like read at the end: one request, no more than the rest of the object.
	tail := make([]byte, 8)
	if n, err := h.ReadAt(tail, int64(len(data)-8)); n != 8 || err != nil || !bytes.Equal(tail, data[len(data)-8:]) {
		t.Fatalf("tail read: %d, %v", n, err)
	}
	if st := h.Stats(); st.Requests != 1 || st.Bytes != 8 {
		t.Errorf("tail read cost %+v, want 1 request of 8 bytes", st)
	}
	// A small read at a new place fetches MinFetch bytes; the next small read inside them is free.
	buf := make([]byte, 1000)
	if _, err := h.ReadAt(buf, 5<<20); err != nil || !bytes.Equal(buf, data[5<<20:5<<20+1000]) {
		t.Fatalf("read at 5 MiB: %v", err)
	}
	if _, err := h.ReadAt(buf, 5<<20+1000); err != nil || !bytes.Equal(buf, data[5<<20+1000:5<<20+2000]) {
		t.Fatalf("second read at 5 MiB: %v", err)
	}
	if st := h.Stats(); st.Requests != 2 || st.Bytes != 8+objstore.MinFetch {
		t.Errorf("after two small reads: %+v, want 2 requests and %d bytes", st, 8+objstore.MinFetch)
	}
	// A sequential scan of 12 MiB: the fetches grow to the block size, so few requests.
	before := h.Stats()
	chunk := make([]byte, 64<<10)
	for off := int64(6 << 20); off < 18<<20; off += int64(len(chunk)) {
		if _, err := h.ReadAt(chunk, off); err != nil || !bytes.Equal(chunk, data[off:off+int64(len(chunk))]) {
			t.Fatalf("sequential read at %d: %v", off, err)
		}
	}
	if st := h.Stats(); st.Requests-before.Requests > 8 {
		t.Errorf("a 12 MiB sequential scan took %d requests, want at most 8", st.Requests-before.Requests)
	}
	// Random ranges, the end of the object included.
	for range 50 {
		off := rng.Int64N(int64(len(data)))
		p := make([]byte, rng.IntN(300000)+1)
		n, err := h.ReadAt(p, off)
		want := data[off:min(off+int64(len(p)), int64(len(data)))]
		if n != len(want) || !bytes.Equal(p[:n], want) || (n < len(p)) != (err == io.EOF) {
			t.Fatalf("ReadAt(%d bytes, %d) = %d, %v", len(p), off, n, err)
		}
	}
	// Sequential Read with Seek, as an Arrow IPC stream reader uses it.
	if _, err := h.Seek(int64(len(data))-100000, io.SeekStart); err != nil {
		t.Fatal(err)
	}
	rest, err := io.ReadAll(h)
	if err != nil || !bytes.Equal(rest, data[len(data)-100000:]) {
		t.Fatalf("ReadAll after Seek: %d bytes, %v", len(rest), err)
	}
	if fi, err := h.Stat(); err != nil || fi.Size() != int64(len(data)) || fi.Name() != "big.bin" {
		t.Errorf("Stat: %v, %v", fi, err)
	}
}
