package sketch

import (
	"bytes"
	"encoding/binary"
	"hash/crc32"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// TestContentIDs: the content identities of the data summarised survive Encode/Decode and Merge,
// and a version-1 file (written before they existed) still decodes, with none.
func TestContentIDs(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	d := 2
	x, _ := blobs(rng, 400, d, []float64{1, 1}, 6)
	cfg := Config{Columns: columns(d), MaxK: 3, CoresetSize: 16, SampleSize: 8, ExpectedRows: 400, Seed: 5}
	a := build(t, cfg, probeOf(t, x, d, 3), x, 200, 0)
	a.Meta.ContentIDs = []string{"sha256:aa", "sha256:bb"}
	var buf bytes.Buffer
	if err := a.Encode(&buf); err != nil {
		t.Fatal(err)
	}
	got, err := Decode(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(got.Meta.ContentIDs, a.Meta.ContentIDs) {
		t.Errorf("decoded ids %v, want %v", got.Meta.ContentIDs, a.Meta.ContentIDs)
	}
	b := build(t, cfg, probeOf(t, x, d, 3), x, 200, 2)
	b.Meta.ContentIDs = []string{"sha256:cc"}
	if err := got.Merge(b); err != nil {
		t.Fatal(err)
	}
	if want := []string{"sha256:aa", "sha256:bb", "sha256:cc"}; !slices.Equal(got.Meta.ContentIDs, want) {
		t.Errorf("merged ids %v, want %v", got.Meta.ContentIDs, want)
	}

	buf.Reset()
	if err := a.Encode(&buf); err != nil {
		t.Fatal(err)
	}
	v2 := buf.Bytes()
	// A version-2 body relabelled version 1 does not decode: version 1 has no units and no ids.
	bad := slices.Clone(v2[:len(v2)-4])
	binary.LittleEndian.PutUint32(bad[8:], 1)
	bad = binary.LittleEndian.AppendUint32(bad, crc32.Checksum(bad, castagnoli))
	if _, err := Decode(bytes.NewReader(bad)); err == nil {
		t.Error("a version-2 body relabelled version 1 decoded")
	}
	// Versions beyond this reader are refused.
	future := slices.Clone(v2[:len(v2)-4])
	binary.LittleEndian.PutUint32(future[8:], 3)
	future = binary.LittleEndian.AppendUint32(future, crc32.Checksum(future, castagnoli))
	if _, err := Decode(bytes.NewReader(future)); err == nil {
		t.Error("version 3 decoded")
	}
}

// TestDecodeVersion1File: a sketch file written by kgauge before format version 2 (no moment
// units, no content identities; testdata/compat/README.md says how it was made) still decodes,
// with the counts its estimate reported.
func TestDecodeVersion1File(t *testing.T) {
	f, err := os.Open(filepath.Join("testdata", "compat", "v1-loads.kgs"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	s, err := Decode(f)
	if err != nil {
		t.Fatalf("version 1 file: %v", err)
	}
	if s.Rows() != 2976 || s.Meta.SkippedRows != 24 || s.Dims() != 24 || len(s.Meta.ContentIDs) != 0 {
		t.Errorf("version 1 file: rows %d, skipped %d, dims %d, ids %v; want 2976, 24, 24, none",
			s.Rows(), s.Meta.SkippedRows, s.Dims(), s.Meta.ContentIDs)
	}
	if err := s.Check(); err != nil {
		t.Errorf("version 1 file fails validation: %v", err)
	}
}
