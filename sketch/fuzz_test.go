package sketch

import (
	"bytes"
	"encoding/binary"
	"hash/crc32"
	"math/rand/v2"
	"runtime"
	"testing"
	"time"
)

// FuzzDecode: Decode never panics, hangs or allocates far beyond its input on any bytes, and what
// it accepts encodes and decodes again. With fixCRC the checksum is recomputed first, so that
// mutations reach the body decoder instead of stopping at the checksum.
func FuzzDecode(f *testing.F) {
	rng := rand.New(rand.NewPCG(3, 4))
	d := 2
	x, _ := blobs(rng, 600, d, []float64{1, 1}, 6)
	cfg := Config{Columns: columns(d), MaxK: 3, CoresetSize: 16, SampleSize: 8, ExpectedRows: 600, Seed: 5}
	s := build(f, cfg, probeOf(f, x, d, 3), x, 200, 0)
	var buf bytes.Buffer
	if err := s.Encode(&buf); err != nil {
		f.Fatal(err)
	}
	f.Add(buf.Bytes(), false)
	f.Add(buf.Bytes(), true)
	f.Add([]byte("KGSKETCH\x01\x00\x00\x00"), true)
	f.Fuzz(func(t *testing.T, data []byte, fixCRC bool) {
		if fixCRC && len(data) >= 16 {
			data = bytes.Clone(data)
			body := data[:len(data)-4]
			binary.LittleEndian.PutUint32(data[len(data)-4:], crc32.Checksum(body, castagnoli))
		}
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		var sk *Sketch
		var err error
		step := "decode"
		done := make(chan struct{})
		go func() {
			defer close(done)
			if sk, err = Decode(bytes.NewReader(data)); err != nil {
				return
			}
			runtime.ReadMemStats(&after)
			step = "encode"
			var again bytes.Buffer
			if err = sk.Encode(&again); err != nil {
				return
			}
			step = "decode again"
			_, err = Decode(bytes.NewReader(again.Bytes()))
		}()
		select {
		case <-done:
		case <-time.After(10 * time.Second):
			t.Fatalf("%s of %d bytes did not return in 10 s", step, len(data))
		}
		if sk == nil {
			return
		}
		if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 64<<20+64*uint64(len(data)) {
			t.Fatalf("decoding %d bytes allocated %d bytes", len(data), alloc)
		}
		if err != nil {
			t.Fatalf("a decoded sketch fails at %s: %v", step, err)
		}
	})
}
