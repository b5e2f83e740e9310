package sketch

import (
	"bytes"
	"encoding/binary"
	"hash/crc32"
	"math/rand/v2"
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

	// Version 1: the same body without the ids (an empty list is its 4-byte count), version 1,
	// the checksum recomputed.
	a.Meta.ContentIDs = nil
	buf.Reset()
	if err := a.Encode(&buf); err != nil {
		t.Fatal(err)
	}
	v2 := buf.Bytes()
	v1 := slices.Clone(v2[:len(v2)-8])
	binary.LittleEndian.PutUint32(v1[8:], 1)
	v1 = binary.LittleEndian.AppendUint32(v1, crc32.Checksum(v1, castagnoli))
	old, err := Decode(bytes.NewReader(v1))
	if err != nil {
		t.Fatalf("version 1 file: %v", err)
	}
	if len(old.Meta.ContentIDs) != 0 || old.Rows() != a.Rows() {
		t.Errorf("version 1: ids %v, rows %d (want none, %d)", old.Meta.ContentIDs, old.Rows(), a.Rows())
	}
	// A version-1 file with the ids appended has trailing bytes.
	bad := slices.Clone(v2[:len(v2)-4])
	binary.LittleEndian.PutUint32(bad[8:], 1)
	bad = binary.LittleEndian.AppendUint32(bad, crc32.Checksum(bad, castagnoli))
	if _, err := Decode(bytes.NewReader(bad)); err == nil {
		t.Error("a version-1 file with trailing ids decoded")
	}
	// Versions beyond this reader are refused.
	future := slices.Clone(v2[:len(v2)-4])
	binary.LittleEndian.PutUint32(future[8:], 3)
	future = binary.LittleEndian.AppendUint32(future, crc32.Checksum(future, castagnoli))
	if _, err := Decode(bytes.NewReader(future)); err == nil {
		t.Error("version 3 decoded")
	}
}
