package sketch

import (
	"math/rand/v2"
	"slices"
	"testing"
	"unsafe"
)

// TestTopKGrowsByDoubling fills reservoirs row by row and checks that the buffers are
// reallocated a logarithmic number of times (append alone grows large buffers by a quarter at
// a time), once when the expected rows fill the
// reservoir, that they never hold much more than twice the rows kept (or the rows expected) nor
// more than the capacity, and that the kept rows are those a reservoir of exactly the capacity
// keeps (the largest keys). A reservoir given no row allocates nothing.
func TestTopKGrowsByDoubling(t *testing.T) {
	if r := newTopK(16385, 512, 1e6); cap(r.pts) != 0 {
		t.Fatalf("a reservoir given no row holds room for %d values", cap(r.pts))
	}
	for _, tc := range []struct {
		capacity, d, rows int
		expect            int64
		moves             int
	}{{16385, 8, 40000, 0, 20}, {1000, 3, 700, 0, 20}, {5, 2, 50, 0, 20}, {16385, 8, 40000, 80000, 1}, {1000, 3, 700, 100, 5}} {
		rng := rand.New(rand.NewPCG(uint64(tc.capacity), 1))
		r := newTopK(tc.capacity, tc.d, tc.expect)
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
			room := max(2*kept, int(tc.expect), 16)
			if c := cap(r.keys); c > room || c > tc.capacity {
				t.Fatalf("capacity %d: %d rows kept in a buffer of %d", tc.capacity, kept, c)
			}
			if c := cap(r.pts); c > room*tc.d || c > tc.capacity*tc.d {
				t.Fatalf("capacity %d: %d rows kept in %d values", tc.capacity, kept, c)
			}
		}
		if moves > tc.moves {
			t.Fatalf("capacity %d, %d rows expected: the point buffer moved %d times, want at most %d", tc.capacity, tc.expect, moves, tc.moves)
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
