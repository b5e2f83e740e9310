package beam

import (
	"bytes"
	"context"
	"io/fs"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	abeam "github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/testing/ptest"
	"github.com/johannesboyne/gofakes3"
	"github.com/johannesboyne/gofakes3/backend/s3mem"
	"github.com/kgauge/kgauge"
	"gocloud.dev/blob"
)

// TestPipelineOverS3 runs the pipeline on prism over a lake in an S3 protocol server on 127.0.0.1,
// writes the result to the bucket, and compares it with Estimate over the same files on disk.
func TestPipelineOverS3(t *testing.T) {
	needPrism(t)
	ctx := context.Background()
	root := writeLake(t)
	backend := s3mem.New()
	if err := backend.CreateBucket("beamlake"); err != nil {
		t.Fatal(err)
	}
	srv := httptest.NewServer(gofakes3.New(backend).Server())
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
	q := "endpoint=" + srv.URL + "&use_path_style=true&region=us-east-1&disable_https=true"
	b, err := blob.OpenBucket(ctx, "s3://beamlake?"+q)
	if err != nil {
		t.Fatal(err)
	}
	defer b.Close()
	err = filepath.WalkDir(root, func(p string, e fs.DirEntry, err error) error {
		if err != nil || e.IsDir() {
			return err
		}
		rel, _ := filepath.Rel(root, p)
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		return b.WriteAll(ctx, "loads/"+filepath.ToSlash(rel), data, nil)
	})
	if err != nil {
		t.Fatal(err)
	}

	opt := testOptions()
	est, _, err := kgauge.Estimate(ctx, []string{root}, opt)
	if err != nil {
		t.Fatal(err)
	}
	start := time.Now()
	plan, err := kgauge.PlanUnits(ctx, []string{"s3://beamlake/loads/?" + q}, opt)
	if err != nil {
		t.Fatal(err)
	}
	p, s := abeam.NewPipelineWithRoot()
	if _, err := Pipeline(s, plan, "s3://beamlake/results/k.json", start); err != nil {
		t.Fatal(err)
	}
	if err := ptest.Run(p); err != nil {
		t.Fatal(err)
	}
	data, err := b.ReadAll(ctx, "results/k.json")
	if err != nil {
		t.Fatal(err)
	}
	got := decodeResult(t, data)
	for _, f := range got.Files {
		if !strings.HasPrefix(f.Path, "s3://beamlake/loads/day=") {
			t.Errorf("file path %q, want an s3://beamlake/loads/ URL", f.Path)
		}
	}
	var want bytes.Buffer
	if err := WriteJSON(&want, est); err != nil {
		t.Fatal(err)
	}
	compareResults(t, got, decodeResult(t, want.Bytes()))
}
