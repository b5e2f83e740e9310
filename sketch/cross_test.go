package sketch

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/blas/blas64"
)

// TestCrossBlocksSameBits: the cross-products added in blocks of rows (Cross.add, Cross.apply) are
// the same bits as adding each row's products to the upper triangle as it arrives, one axpy per
// triangle row, for row counts around the block size, widths from 1 to above the block's, and
// rows that mix magnitudes, zeros and negative zeros.
func TestCrossBlocksSameBits(t *testing.T) {
	for _, d := range []int{1, 3, 16, 70} {
		for _, rows := range []int{1, crossBlock - 1, crossBlock, crossBlock + 1, 3*crossBlock + 5} {
			t.Run(fmt.Sprintf("d=%d/rows=%d", d, rows), func(t *testing.T) {
				rng := rand.New(rand.NewPCG(uint64(d), uint64(rows)))
				x := make([]float64, rows*d)
				for i := range x {
					switch rng.IntN(8) {
					case 0:
						x[i] = 0
					case 1:
						x[i] = math.Copysign(0, -1)
					default:
						x[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(13)-6))
					}
				}
				got := newCross(make([]float64, d), ones(d))
				// The reference: each row's products added as it arrives.
				want := newCross(make([]float64, d), ones(d))
				for i := range rows {
					dx := x[i*d : (i+1)*d]
					got.add(dx)
					want.N++
					for j, a := range dx {
						want.S1[j] += a
						blas64.Implementation().Daxpy(d-j, a, dx[j:], 1, want.C[j*d+j:j*d+d], 1)
					}
					if i == rows/2 && len(got.pend) == 0 && (i+1)%crossBlock != 0 {
						t.Fatalf("after %d rows no row is held", i+1)
					}
				}
				got.apply()
				if got.N != want.N || len(got.pend) != 0 {
					t.Fatalf("N %d, %d rows held; want N %d and none held", got.N, len(got.pend)/d, want.N)
				}
				for _, f := range []struct {
					name      string
					got, want []float64
				}{{"S1", got.S1, want.S1}, {"C", got.C, want.C}} {
					for i := range f.want {
						if math.Float64bits(f.got[i]) != math.Float64bits(f.want[i]) {
							t.Fatalf("%s[%d] = %v, want %v bit for bit", f.name, i, f.got[i], f.want[i])
						}
					}
				}
			})
		}
	}
}

// TestCrossHeldRowsReachReaders: rows still held in a block reach every reader of the sketch's
// cross-products: Cross, Encode and Merge.
func TestCrossHeldRowsReachReaders(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 3))
	d := 3
	x, _ := blobs(rng, 5, d, []float64{1}, 1) // fewer rows than a block
	cfg := Config{Columns: columns(d), MaxK: 2, ExpectedRows: 5, Seed: 1}
	fresh := func() *Sketch {
		s, err := New(cfg, probeOf(t, x, d, 2))
		if err != nil {
			t.Fatal(err)
		}
		s.Add(x)
		return s
	}
	if c := fresh().Cross(); c.N != 5 || !(c.C[0] > 0) {
		t.Fatalf("Cross: N %d, C[0] %v; want 5 rows in C", c.N, c.C[0])
	}
	var buf bytes.Buffer
	if err := fresh().Encode(&buf); err != nil {
		t.Fatal(err)
	}
	dec, err := Decode(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if c := dec.Cross(); !(c.C[0] > 0) {
		t.Fatalf("decoded C[0] = %v; the held rows were not encoded", c.C[0])
	}
	a, b := fresh(), fresh()
	if err := a.Merge(b); err != nil {
		t.Fatal(err)
	}
	one := fresh().Cross()
	if c := a.Cross(); c.N != 10 || math.Abs(c.C[0]-2*one.C[0]) > 1e-9*one.C[0] {
		t.Fatalf("merged: N %d, C[0] %v; want 10 rows and twice %v", c.N, c.C[0], one.C[0])
	}
}
