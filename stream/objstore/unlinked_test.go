//go:build !kgauge_gcs

package objstore_test

import (
	"strings"
	"testing"

	"github.com/kgauge/kgauge/stream/objstore"
)

// TestUnlinkedDriver checks that a scheme whose driver is not in the binary gets an error naming the
// build tag.
func TestUnlinkedDriver(t *testing.T) {
	s := &objstore.Store{}
	_, err := s.List("gs://bucket/prefix/")
	if err == nil || !strings.Contains(err.Error(), "kgauge_gcs") {
		t.Errorf("gs:// without its driver: error %v, want one naming the build tag", err)
	}
}
