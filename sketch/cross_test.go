package sketch

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/blas/blas64"
)

// TestCrossBlocksSameBits: the cross-products added in blocks of rows (Cross.add given several
// rows, split into Dsyrk blocks) are the same bits as adding each row's products to the upper
// triangle as it arrives, one axpy per triangle row, for row counts around the block size, rows
// given in pieces of other sizes and further apart than their width, widths from 1 to above the
// block's, and rows that mix magnitudes, zeros and negative zeros.
func TestCrossBlocksSameBits(t *testing.T) {
	for _, d := range []int{1, 3, 16, 70} {
		for _, rows := range []int{1, crossBlock - 1, crossBlock, crossBlock + 1, 3*crossBlock + 5} {
			for _, piece := range []int{1, 7, rows} {
				ld := d + piece%3 // rows d to d+2 apart, as the piece's size gives
				t.Run(fmt.Sprintf("d=%d/rows=%d/piece=%d", d, rows, piece), func(t *testing.T) {
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
					held := make([]float64, rows*ld)
					for i := range rows {
						copy(held[i*ld:], x[i*d:(i+1)*d])
					}
					got := newCross(make([]float64, d), ones(d))
					for lo := 0; lo < rows; lo += piece {
						got.add(held[lo*ld:], ld, min(piece, rows-lo))
					}
					// The reference: each row's products added as it arrives.
					want := newCross(make([]float64, d), ones(d))
					for i := range rows {
						dx := x[i*d : (i+1)*d]
						want.N++
						for j, a := range dx {
							want.S1[j] += a
							blas64.Implementation().Daxpy(d-j, a, dx[j:], 1, want.C[j*d+j:j*d+d], 1)
						}
					}
					if got.N != want.N {
						t.Fatalf("N %d, want %d", got.N, want.N)
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
}

// TestCrossHeldRowsReachReaders: rows still held in the mini-batch buffer reach every reader of
// the sketch's cross-products (Cross, Encode and Merge), and Cross does not run the mini-batch
// step early: a sketch read by Cross on the way encodes to the same bytes as one that was not.
// The race detector (`go test -race`) checks the wide case's goroutine.
func TestCrossHeldRowsReachReaders(t *testing.T) {
	for _, d := range []int{3, concurrentCrossFrom} { // added inline, and beside the mini-batch step
		t.Run(fmt.Sprint(d), func(t *testing.T) { crossHeldRowsReachReaders(t, d) })
	}
}

func crossHeldRowsReachReaders(t *testing.T, d int) {
	rng := rand.New(rand.NewPCG(15, 3))
	x, _ := blobs(rng, 10, d, []float64{1}, 1)
	// A mini-batch of 4 rows: after 3 rows, and after 10, rows are still held.
	cfg := Config{Columns: columns(d), MaxK: 2, ExpectedRows: 10, MiniBatchSize: 4, Seed: 1}
	fresh := func(rows int) *Sketch {
		s, err := New(cfg, probeOf(t, x, d, 2))
		if err != nil {
			t.Fatal(err)
		}
		s.Add(x[:rows*d])
		return s
	}
	if c := fresh(3).Cross(); c.N != 3 || !(c.C[0] > 0) {
		t.Fatalf("Cross: N %d, C[0] %v; want 3 rows in C", c.N, c.C[0])
	}
	encode := func(s *Sketch) []byte {
		var buf bytes.Buffer
		if err := s.Encode(&buf); err != nil {
			t.Fatal(err)
		}
		return buf.Bytes()
	}
	plain := fresh(3)
	plain.Add(x[3*d:])
	read := fresh(3)
	mid := read.Cross()
	read.Add(x[3*d:])
	if !bytes.Equal(encode(read), encode(plain)) {
		t.Fatal("a sketch read by Cross after 3 rows encodes differently from one that was not")
	}
	dec, err := Decode(bytes.NewReader(encode(fresh(10))))
	if err != nil {
		t.Fatal(err)
	}
	if c := dec.Cross(); c.N != 10 || !(c.C[0] > mid.C[0]) {
		t.Fatalf("decoded: N %d, C[0] %v; want 10 rows, more than the first 3 rows' %v", c.N, c.C[0], mid.C[0])
	}
	a, b := fresh(10), fresh(10)
	if err := a.Merge(b); err != nil {
		t.Fatal(err)
	}
	one := fresh(10).Cross()
	if c := a.Cross(); c.N != 20 || math.Abs(c.C[0]-2*one.C[0]) > 1e-9*one.C[0] {
		t.Fatalf("merged: N %d, C[0] %v; want 20 rows and twice %v", c.N, c.C[0], one.C[0])
	}
}

// TestCrossStride: from paddedFrom columns the rows held for the covariance are at least their
// width apart, by at most 15 values more, and 64 bytes times an odd number apart, so that
// consecutive rows start in different sets of the cache (a stride of 4 KiB put a 512-column
// block's rows in the same few); narrower rows are their width apart.
func TestCrossStride(t *testing.T) {
	for d := 1; d <= 2048; d++ {
		ld := crossStride(d)
		if d < paddedFrom {
			if ld != d {
				t.Fatalf("crossStride(%d) = %d, want %d", d, ld, d)
			}
			continue
		}
		if ld < d || ld > d+15 || (ld*8/64)%2 != 1 || ld*8%64 != 0 {
			t.Fatalf("crossStride(%d) = %d: want d..d+15, 64 bytes times an odd number", d, ld)
		}
	}
}

// TestStepsSplitSameBits: from concurrentCrossFrom columns flush shares the cross-products and
// the k's mini-batch steps between two goroutines, behind the feed; the sketch encodes to the same
// bytes as one whose work all runs on one, in order, also when Cross and Check read it while a
// flush may be running, and every k's step saw rows.
func TestStepsSplitSameBits(t *testing.T) {
	d := concurrentCrossFrom
	rng := rand.New(rand.NewPCG(16, 4))
	x, _ := blobs(rng, 3000, d, []float64{1, 4, 9}, 1)
	cfg := Config{Columns: columns(d), MaxK: 6, ExpectedRows: 3000, MiniBatchSize: 128, MiniBatchRows: 3000, Seed: 2}
	build := func(goroutines int) (*Sketch, []byte) {
		s, err := New(cfg, probeOf(t, x, d, 6))
		if err != nil {
			t.Fatal(err)
		}
		if len(s.steps) != 2 {
			t.Fatalf("%d columns: %d step goroutines, want 2", d, len(s.steps))
		}
		s.steps = s.steps[:goroutines]
		for lo := 0; lo < 3000; lo += 700 {
			s.Add(x[lo*d : min(lo+700, 3000)*d])
			if goroutines > 1 {
				if c := s.Cross(); c.N != int64(min(lo+700, 3000)) {
					t.Fatalf("Cross after %d rows: N = %d", min(lo+700, 3000), c.N)
				}
				if err := s.Check(); err != nil {
					t.Fatal(err)
				}
			}
		}
		var buf bytes.Buffer
		if err := s.Encode(&buf); err != nil {
			t.Fatal(err)
		}
		return s, buf.Bytes()
	}
	one, want := build(1)
	_, got := build(2)
	if !bytes.Equal(got, want) {
		t.Fatal("the sketch with its steps on two goroutines encodes differently from one on one")
	}
	for i, ps := range one.parts {
		total := 0.0
		for _, p := range ps {
			for _, c := range p.Counts {
				total += c
			}
		}
		if total == 0 {
			t.Fatalf("k=%d: no row reached the mini-batch step", cfg.MinK+i)
		}
	}
}

// TestHalfTriangle: halfTriangle's row splits a d×d upper triangle's elements in half, give or
// take half of the row it starts at (no split is nearer), so flushShared's two cross-product
// tasks take about the same time.
func TestHalfTriangle(t *testing.T) {
	for d := 1; d <= 4096; d++ {
		j := halfTriangle(d)
		below := d*j - j*(j-1)/2
		total := d * (d + 1) / 2
		if off := math.Abs(float64(below) - float64(total)/2); j < 0 || j >= d || off > float64(d-j)/2 {
			t.Fatalf("d=%d: halfTriangle = %d, rows below it hold %d of %d", d, j, below, total)
		}
	}
}
