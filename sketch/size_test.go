package sketch

import (
	"math/rand/v2"
	"runtime"
	"testing"
)

// TestHeldBytesMatchesHeap builds full sketches and compares HeldBytes with the live heap they
// hold (runtime.MemStats after a collection). Each case is dominated by one term, so a term wrong
// by a factor of 2 moves the prediction outside the ±25% band: the reservoirs (a large coreset),
// the cross products (wide rows), the mini-batch buffer (a large mini-batch), the centres of every
// k (a wide k range), the batch buffer (long batches).
func TestHeldBytesMatchesHeap(t *testing.T) {
	for _, tc := range []struct {
		name                  string
		d, coreset, sample    int
		miniBatch, maxK, rows int
		batch                 int
	}{
		{"reservoirs", 8, 20000, 8000, 64, 4, 60000, 512},
		{"cross products", 400, 100, 20, 16, 2, 600, 64},
		{"mini-batch buffer", 16, 100, 20, 40000, 2, 45000, 512},
		{"centres of every k", 24, 240, 20, 16, 120, 2000, 256},
		{"batch buffer", 2, 100, 20, 16, 2, 400000, 400000},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(3, 5))
			x, _ := blobs(rng, tc.rows, tc.d, []float64{1, 1}, 4)
			cols := byColumn(x, tc.d)
			cfg := Config{Columns: columns(tc.d), MinK: 1, MaxK: tc.maxK, CoresetSize: tc.coreset,
				SampleSize: tc.sample, MiniBatchSize: tc.miniBatch, MiniBatchRows: int64(tc.rows),
				ExpectedRows: int64(tc.rows), Seed: 1}
			p := probeOf(t, x, tc.d, tc.maxK)
			var before, after runtime.MemStats
			runtime.GC()
			runtime.ReadMemStats(&before)
			s, err := New(cfg, p)
			if err != nil {
				t.Fatal(err)
			}
			for off := 0; off < tc.rows; off += tc.batch {
				end := min(tc.rows, off+tc.batch)
				part := make([][]float64, tc.d)
				for j := range part {
					part[j] = cols[j][off:end]
				}
				s.AddColumns(part)
			}
			runtime.GC()
			runtime.ReadMemStats(&after)
			runtime.KeepAlive(s)
			runtime.KeepAlive(x)
			runtime.KeepAlive(cols)
			runtime.KeepAlive(p)
			measured := float64(int64(after.HeapAlloc) - int64(before.HeapAlloc))
			held := float64(HeldBytes(cfg, tc.d, tc.batch))
			t.Logf("predicted %.0f, measured %.0f", held, measured)
			if r := held / measured; r < 0.75 || r > 1.25 {
				t.Errorf("HeldBytes = %.0f, the sketch holds %.0f bytes (ratio %.2f, want 0.75..1.25)", held, measured, r)
			}
		})
	}
}
