package sketch

import (
	"math/rand/v2"
	"slices"
	"testing"
	"unsafe"
)

// TestTopKGrowsByDoubling fills reservoirs row by row and checks that the buffers are
// reallocated a logarithmic number of times (append alone grows large buffers by a quarter,
// about 40 reallocations on the way to 16,385 rows), that they never hold much more than twice
// the rows kept nor more than the capacity, and that the kept rows are those a reservoir of
// exactly the capacity keeps (the largest keys).
func TestTopKGrowsByDoubling(t *testing.T) {
	for _, tc := range []struct{ capacity, d, rows int }{{16385, 8, 40000}, {1000, 3, 700}, {5, 2, 50}} {
		rng := rand.New(rand.NewPCG(uint64(tc.capacity), 1))
		r := newTopK(tc.capacity, tc.d)
		x := make([]float64, tc.d)
		var last unsafe.Pointer
		moves := 0
		keys := make([]float64, tc.rows)
		for i := range tc.rows {
			keys[i] = rng.Float64()
			for j := range x {
				x[j] = float64(i)
			}
			r.offer(keys[i], x, 1)
			if p := unsafe.Pointer(unsafe.SliceData(r.pts)); p != last {
				moves++
				last = p
			}
			kept := r.len()
			if c := cap(r.keys); c > max(2*kept, 16)+64 || c > tc.capacity+64 {
				t.Fatalf("capacity %d: %d rows kept in a buffer of %d", tc.capacity, kept, c)
			}
			if c := cap(r.pts); c > (max(2*kept, 16)+64)*tc.d || c > (tc.capacity+64)*tc.d {
				t.Fatalf("capacity %d: %d rows kept in %d values", tc.capacity, kept, c)
			}
		}
		if limit := 20; moves > limit {
			t.Fatalf("capacity %d: the point buffer moved %d times, want at most %d", tc.capacity, moves, limit)
		}
		// The kept keys are the largest min(rows, capacity) of those offered.
		want := 0
		cut := kthLargest(keys, min(tc.rows, tc.capacity))
		for _, k := range keys {
			if k >= cut {
				want++
			}
		}
		if r.len() != min(tc.rows, tc.capacity) || want != r.len() {
			t.Fatalf("capacity %d: kept %d rows, want %d", tc.capacity, r.len(), want)
		}
		for _, k := range r.keys {
			if k < cut {
				t.Fatalf("capacity %d: kept key %v below the cut %v", tc.capacity, k, cut)
			}
		}
	}
}

// kthLargest returns the k-th largest value of v (k >= 1).
func kthLargest(v []float64, k int) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	return s[len(s)-k]
}
