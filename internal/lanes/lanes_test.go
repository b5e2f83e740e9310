package lanes

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
)

// fill sets v to normal values times scale.
func fill(rng *rand.Rand, v []float64, scale float64) {
	for i := range v {
		v[i] = rng.NormFloat64() * scale
	}
}

// scales run each check from subnormal to overflowing magnitudes.
var scales = []float64{1, 1e-3, 1e6, 1e-310, 1e154, 1e200}

// bitDiff returns the first index below len(want) where got's bits differ from want's, or -1.
func bitDiff(got, want []float64) int {
	for i, w := range want {
		if math.Float64bits(got[i]) != math.Float64bits(w) {
			return i
		}
	}
	return -1
}

// TestSquaredDistsMatchesScalar checks the sums Nearest2 scans (their Go reference) against the
// scalar loop they replace, each vector's squared differences added over t one after another
// on the row-major vectors, bit for bit, and that it writes nothing past the groups asked for.
func TestSquaredDistsMatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 3))
	for _, d := range []int{1, 3, 4, 9, 16, 31, 64, 128} {
		for _, groups := range []int{1, 2, 3, 4, 5, 8, 9, 25} {
			for _, sc := range scales {
				x := make([]float64, d)
				c := make([]float64, 4*groups*d)
				fill(rng, x, sc)
				fill(rng, c, sc)
				got := make([]float64, 4*groups+1)
				got[4*groups] = -7
				squaredDistsGo(x, Group(nil, c, groups, d), groups, got)
				for j := 0; j < 4*groups; j++ {
					want := 0.0
					for tt, v := range x {
						e := v - c[j*d+tt]
						want += e * e
					}
					if math.Float64bits(want) != math.Float64bits(got[j]) {
						t.Fatalf("d=%d groups=%d scale %g: out[%d] = %v, want %v", d, groups, sc, j, got[j], want)
					}
				}
				if got[4*groups] != -7 {
					t.Fatalf("d=%d groups=%d: wrote past the last group", d, groups)
				}
			}
		}
	}
}

// TestWeightedRootSumsMatchesScalar checks WeightedRootSums against the scalar loop it replaces
// (each row's four squared distances, then w·√ added to each total in row order), bit for bit,
// for odd and even row counts, zero weights and rows equal to an anchor.
func TestWeightedRootSumsMatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 1))
	for _, d := range []int{1, 2, 5, 16, 33, 64} {
		for _, rows := range []int{0, 1, 2, 3, 7, 64, 101} {
			for _, sc := range scales {
				a := make([]float64, 4*d)
				x := make([]float64, rows*d)
				w := make([]float64, rows)
				fill(rng, a, sc)
				fill(rng, x, sc)
				for r := range w {
					w[r] = rng.Float64() * 3
				}
				if rows > 2 {
					w[1] = 0
					copy(x[2*d:3*d], a[:d]) // the first anchor itself
				}
				var want [4]float64
				for l := 0; l < 4; l++ {
					for r := 0; r < rows; r++ {
						s := 0.0
						for tt := 0; tt < d; tt++ {
							e := a[l*d+tt] - x[r*d+tt]
							s += e * e
						}
						want[l] += w[r] * math.Sqrt(s)
					}
				}
				var got [4]float64
				WeightedRootSums(Group(nil, a, 1, d), x, w, &got)
				for l := range want {
					if math.Float64bits(want[l]) != math.Float64bits(got[l]) {
						t.Fatalf("d=%d rows=%d scale %g: lane %d = %v, want %v", d, rows, sc, l, got[l], want[l])
					}
				}
			}
		}
	}
}

// TestShortBuffers checks that the kernels refuse buffers too short for what is asked.
func TestShortBuffers(t *testing.T) {
	for name, f := range map[string]func(){
		"Nearest2 ct":       func() { Nearest2(make([]float64, 4), make([]float64, 15), 1) },
		"Nearest2 no group": func() { Nearest2(make([]float64, 4), make([]float64, 16), 0) },
		"Dist2 b":           func() { Dist2(make([]float64, 5), make([]float64, 4)) },
		"SyrkUpper c":       func() { SyrkUpper(make([]float64, 8), make([]float64, 3), 3, 3, 1) },
		"SyrkUpper a":       func() { SyrkUpper(make([]float64, 9), make([]float64, 6), 3, 4, 2) },
		"SyrkUpper lda":     func() { SyrkUpper(make([]float64, 9), make([]float64, 6), 3, 2, 2) },
		"SyrkUpperRows hi":  func() { SyrkUpperRows(make([]float64, 9), make([]float64, 6), 3, 3, 2, 0, 4) },
		"SyrkUpperRows lo":  func() { SyrkUpperRows(make([]float64, 9), make([]float64, 6), 3, 3, 2, 2, 1) },
		"Dots2 out":         func() { Dots2(make([]float64, 2), make([]float64, 2), make([]float64, 8), 1, make([]float64, 7)) },
		"WeightedRootSums x": func() {
			var o [4]float64
			WeightedRootSums(make([]float64, 8), make([]float64, 3), make([]float64, 2), &o)
		},
		"WeightedRootSums a4": func() {
			var o [4]float64
			WeightedRootSums(make([]float64, 7), make([]float64, 8), make([]float64, 1), &o)
		},
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", name)
				}
			}()
			f()
		}()
	}
}

// TestNearest2MatchesScan checks Nearest2 (the assembly where the machine has it, and the Go
// reference) against a scan of the sums in index order, bit for bit: the first index
// of the smallest, the smallest, the second smallest. The cases include exact ties inside one
// lane and across lanes, sums that overflow to +Inf, and a point equal to a vector.
func TestNearest2MatchesScan(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	m := func(x, ct []float64, groups int, viaGo bool) (int, float64, float64) {
		if !viaGo {
			return Nearest2(x, ct, groups)
		}
		saved := Vector
		defer func() { setVector(saved) }()
		setVector(false)
		return Nearest2(x, ct, groups)
	}
	for _, d := range []int{1, 2, 5, 16, 33} {
		for _, groups := range []int{1, 2, 3, 4, 5, 7, 8, 9, 26} {
			for _, sc := range scales {
				for trial := 0; trial < 12; trial++ {
					n := 4 * groups
					c := make([]float64, n*d)
					fill(rng, c, sc)
					switch trial % 4 {
					case 1: // a tie across lanes and one inside a lane
						copy(c[min(3, n-1)*d:], c[:d])
						copy(c[min(4, n-1)*d:(min(4, n-1)+1)*d], c[:d])
					case 2: // every vector the same
						for j := 1; j < n; j++ {
							copy(c[j*d:(j+1)*d], c[:d])
						}
					}
					x := make([]float64, d)
					fill(rng, x, sc)
					if trial%3 == 0 {
						copy(x, c[(n-1)*d:])
					}
					sums := make([]float64, n)
					ct := Group(nil, c, groups, d)
					squaredDistsGo(x, ct, groups, sums)
					wb, w1, w2 := 0, math.Inf(1), math.Inf(1)
					for j, v := range sums {
						if v < w1 {
							w2, w1, wb = w1, v, j
						} else if v < w2 {
							w2 = v
						}
					}
					for _, viaGo := range []bool{false, true} {
						b, d1, d2 := m(x, ct, groups, viaGo)
						if b != wb || math.Float64bits(d1) != math.Float64bits(w1) || math.Float64bits(d2) != math.Float64bits(w2) {
							t.Fatalf("d=%d groups=%d scale %g trial %d go %v: (%d, %v, %v), scan (%d, %v, %v)", d, groups, sc, trial, viaGo, b, d1, d2, wb, w1, w2)
						}
					}
				}
			}
		}
	}
}

// TestDist2MatchesScalar checks Dist2 (the assembly where the machine has it, and the Go
// reference) against its definition written out, bit for bit: s_{t mod 4} over the whole blocks
// of four, the rest added to s_0, then (s_0 + s_1) + (s_2 + s_3). Lengths 0 to 70 cover every
// tail; the slices start at odd offsets so no load is aligned, and b is longer than a.
func TestDist2MatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 9))
	for n := 0; n <= 70; n++ {
		for _, sc := range scales {
			buf := make([]float64, 2*n+5)
			fill(rng, buf, sc)
			a, b := buf[1:1+n], buf[n+2:]
			if n > 2 {
				b[1] = a[1] // one zero difference
			}
			var s [4]float64
			whole := n / 4 * 4
			for i := 0; i < n; i++ {
				e := a[i] - b[i]
				if i < whole {
					s[i%4] += e * e
				} else {
					s[0] += e * e
				}
			}
			want := (s[0] + s[1]) + (s[2] + s[3])
			for _, viaGo := range []bool{false, true} {
				saved := Vector
				setVector(!viaGo && saved)
				got := Dist2(a, b)
				setVector(saved)
				if math.Float64bits(got) != math.Float64bits(want) {
					t.Fatalf("n=%d scale %g go %v: Dist2 = %v, want %v", n, sc, viaGo, got, want)
				}
			}
		}
	}
}

// TestDots2MatchesScalar checks Dots2 (the assembly where the machine has it, and the Go
// reference) against the scalar block it replaces in kmeans' assignment, on the row-major
// centres: each point's dot product with each centre added over t in order, bit for bit; group
// counts below, at and past four cover both of the kernel's loops; nothing is written past the
// groups asked for.
func TestDots2MatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 1))
	for _, d := range []int{1, 2, 5, 16, 33, 64} {
		for _, groups := range []int{1, 2, 3, 4, 5, 7, 8, 9} {
			for _, sc := range scales {
				x := make([]float64, 2*d)
				c := make([]float64, 4*groups*d)
				fill(rng, x, sc)
				fill(rng, c, sc)
				x0, x1 := x[:d], x[d:]
				ct := Group(nil, c, groups, d)
				for _, viaGo := range []bool{false, true} {
					got := make([]float64, 8*groups+1)
					got[8*groups] = -7
					saved := Vector
					setVector(!viaGo && saved)
					Dots2(x0, x1, ct, groups, got)
					setVector(saved)
					for j := 0; j < 4*groups; j++ {
						var a0, a1 float64
						for tt, u := range x0 {
							a0 += u * c[j*d+tt]
							a1 += x1[tt] * c[j*d+tt]
						}
						g, l := j/4, j%4
						if math.Float64bits(got[8*g+l]) != math.Float64bits(a0) || math.Float64bits(got[8*g+4+l]) != math.Float64bits(a1) {
							t.Fatalf("d=%d groups=%d scale %g go %v: centre %d: (%v, %v), want (%v, %v)", d, groups, sc, viaGo, j, got[8*g+l], got[8*g+4+l], a0, a1)
						}
					}
					if got[8*groups] != -7 {
						t.Fatalf("d=%d groups=%d go %v: wrote past the last group", d, groups, viaGo)
					}
				}
			}
		}
	}
}

// TestDist2x4MatchesDist2 checks Dist2x4 (the assembly where the machine has it, and the Go
// reference) against Dist2 of each row, bit for bit, at every length 0–70 (whole blocks and
// tails), unaligned, with rows of different scales and one zero difference.
func TestDist2x4MatchesDist2(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 3))
	for n := 0; n <= 70; n++ {
		for _, sc := range scales {
			buf := make([]float64, 5*n+3)
			fill(rng, buf, sc)
			a, c := buf[1:1+n], buf[n+2:5*n+2]
			if n > 2 {
				c[2*n+1] = a[1] // row 2: one zero difference
				for j := range n {
					c[3*n+j] *= 1e-3 // row 3 on another scale
				}
			}
			for _, viaGo := range []bool{false, true} {
				saved := Vector
				setVector(!viaGo && saved)
				var got [4]float64
				Dist2x4(a, c, &got)
				setVector(saved)
				for r := range got {
					want := Dist2(a, c[r*n:(r+1)*n])
					if math.Float64bits(got[r]) != math.Float64bits(want) {
						t.Fatalf("n=%d scale %g go %v row %d: Dist2x4 = %v, Dist2 = %v", n, sc, viaGo, r, got[r], want)
					}
				}
			}
		}
	}
}

// TestSyrkUpperMatchesDsyrk checks SyrkUpper (the assembly where the machine has it, and the Go
// reference) against gonum's Dsyrk (upper, transposed, alpha and beta 1) bit for bit, on widths
// around the kernel's blocks of 32 and 4, from subnormal to overflowing magnitudes, with zeros,
// negative zeros and a NaN among the multipliers (Dsyrk skips a zero multiplier, not a NaN), rows
// further apart than their width, a starting triangle that is not zero, and values outside the
// upper triangle left as they were.
func TestSyrkUpperMatchesDsyrk(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 4))
	for _, d := range []int{1, 2, 3, 4, 5, 7, 31, 32, 33, 36, 37, 64, 70, 100} {
		for _, rows := range []int{1, 5, 32} {
			for i, sc := range scales {
				lda := d + 3*(i%2) // rows d apart, or 3 values further
				a := make([]float64, rows*lda+1)[:(rows-1)*lda+d]
				fill(rng, a, sc)
				for i := range a {
					switch rng.IntN(10) {
					case 0:
						a[i] = 0
					case 1:
						a[i] = math.Copysign(0, -1)
					}
				}
				if rows > 1 && d > 2 {
					a[lda+1] = math.NaN()
				}
				start := make([]float64, d*d)
				fill(rng, start, sc)
				want := slices.Clone(start)
				blas64.Implementation().Dsyrk(blas.Upper, blas.Trans, d, rows, 1, a, lda, 1, want, d)
				for _, viaGo := range []bool{false, true} {
					saved := Vector
					setVector(!viaGo && saved)
					got := slices.Clone(start)
					SyrkUpper(got, a, d, lda, rows)
					setVector(saved)
					for i := range want {
						if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
							t.Fatalf("d=%d rows=%d scale %g go %v: c[%d] = %v, Dsyrk %v", d, rows, sc, viaGo, i, got[i], want[i])
						}
					}
				}
				// SyrkUpperRows: the triangle's rows below a split, then from it, give Dsyrk's bits,
				// and one range leaves every element outside its rows as it was.
				split := rng.IntN(d + 1)
				got := slices.Clone(start)
				SyrkUpperRows(got, a, d, lda, rows, 0, split)
				for i := range got {
					if j := i / d; j >= split && math.Float64bits(got[i]) != math.Float64bits(start[i]) {
						t.Fatalf("d=%d rows=%d: SyrkUpperRows(0, %d) changed c[%d] of row %d", d, rows, split, i, j)
					}
				}
				SyrkUpperRows(got, a, d, lda, rows, split, d)
				for i := range want {
					if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
						t.Fatalf("d=%d rows=%d split %d: c[%d] = %v, Dsyrk %v", d, rows, split, i, got[i], want[i])
					}
				}
			}
		}
	}
}

// TestAddMomentsMatchesScalar checks AddMoments (the assembly where the machine has it, and the
// Go reference) against the diagonal mixture's M-step loop it replaces, s[t] += w·e and
// q[t] += w·e·e with e = x[t] − m[t], bit for bit: widths around the blocks of four, subnormal to
// overflowing magnitudes, a weight of zero and a negative one, a NaN value, and s and q longer
// than x, whose values past x must stay as they were.
func TestAddMomentsMatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 4))
	for n := 0; n <= 70; n++ {
		for _, sc := range scales {
			for _, w := range []float64{0.37, 0, -2.5, 1e-300} {
				x, m := make([]float64, n), make([]float64, n+3)
				s0, q0 := make([]float64, n+3), make([]float64, n+3)
				fill(rng, x, sc)
				fill(rng, m, sc)
				fill(rng, s0, sc)
				fill(rng, q0, sc*sc)
				if n > 5 {
					x[5] = math.NaN()
				}
				want, wantQ := append([]float64(nil), s0...), append([]float64(nil), q0...)
				for i, v := range x {
					e := v - m[i]
					want[i] += w * e
					wantQ[i] += w * e * e
				}
				for _, viaGo := range []bool{false, true} {
					s, q := append([]float64(nil), s0...), append([]float64(nil), q0...)
					saved := Vector
					setVector(!viaGo && saved)
					AddMoments(x, m, s, q, w)
					setVector(saved)
					if i := max(bitDiff(s, want), bitDiff(q, wantQ)); i >= 0 {
						t.Fatalf("n=%d scale %g w %g go %v: value %d: s %v q %v, want %v %v", n, sc, w, viaGo, i, s[i], q[i], want[i], wantQ[i])
					}
				}
			}
		}
	}
	defer func() {
		if recover() == nil {
			t.Error("AddMoments with q shorter than x did not panic")
		}
	}()
	AddMoments(make([]float64, 4), make([]float64, 4), make([]float64, 4), make([]float64, 3), 1)
}

// TestScaledDistsMatchesScalar checks ScaledDists (the assembly where the machine has it, and the
// Go reference) against the diagonal mixture's E-step loop it replaces, q += (x[t] − μ[t])² ·
// s[t] over t in order for each component on the row-major rows, bit for bit: widths around the
// blocks, one to nine groups (both of the kernel's loops), subnormal to overflowing magnitudes,
// a NaN value; nothing is written past the groups asked for.
func TestScaledDistsMatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 2))
	for _, d := range []int{1, 2, 3, 4, 5, 8, 16, 17, 64} {
		for _, groups := range []int{1, 2, 3, 4, 5, 9} {
			for _, sc := range scales {
				x := make([]float64, d)
				c, s := make([]float64, 4*groups*d), make([]float64, 4*groups*d)
				fill(rng, x, sc)
				fill(rng, c, sc)
				for i := range s {
					s[i] = 0.5 / (0.1 + rng.Float64())
				}
				if d > 2 && groups > 1 {
					c[5*d+1] = math.NaN()
				}
				want := make([]float64, 4*groups)
				for r := range want {
					q := 0.0
					for i, v := range x {
						e := v - c[r*d+i]
						q += e * e * s[r*d+i]
					}
					want[r] = q
				}
				ct, st := Group(nil, c, groups, d), Group(nil, s, groups, d)
				for _, viaGo := range []bool{false, true} {
					out := make([]float64, 4*groups+3)
					out[4*groups], out[4*groups+2] = 7, 9
					saved := Vector
					setVector(!viaGo && saved)
					ScaledDists(x, ct, st, groups, out)
					setVector(saved)
					if r := bitDiff(out, want); r >= 0 {
						t.Fatalf("d=%d groups=%d scale %g go %v: vector %d: %v, want %v", d, groups, sc, viaGo, r, out[r], want[r])
					}
					if out[4*groups] != 7 || out[4*groups+1] != 0 || out[4*groups+2] != 9 {
						t.Fatalf("d=%d groups=%d go %v: wrote past the groups: %v", d, groups, viaGo, out[4*groups:])
					}
				}
			}
		}
	}
}

// TestAddOuter4MatchesScalar checks AddOuter4 (the assembly where the machine has it, and the Go
// reference) against the loop it replaces (criteria's outer4), q[a·d + b] += a_0·e_0[b] + … +
// a_3·e_3[b] with a_c = w[c]·e_c[a], bit for bit, on widths around the blocks of four, subnormal to
// overflowing magnitudes, a zero and a negative weight and a NaN value; the lower triangle, which
// it must not touch, keeps its values.
func TestAddOuter4MatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 5))
	for d := 1; d <= 40; d++ {
		for _, sc := range scales {
			e := make([]float64, 4*d)
			fill(rng, e, sc)
			if d > 3 {
				e[2*d+3] = math.NaN()
			}
			w := [4]float64{0.75, 0, -1.5, 3}
			q0 := make([]float64, d*d)
			fill(rng, q0, sc*sc)
			want := append([]float64(nil), q0...)
			for a := 0; a < d; a++ {
				var ac [4]float64
				for c := range ac {
					ac[c] = w[c] * e[c*d+a]
				}
				for b := a; b < d; b++ {
					want[a*d+b] += ac[0]*e[b] + ac[1]*e[d+b] + ac[2]*e[2*d+b] + ac[3]*e[3*d+b]
				}
			}
			for _, viaGo := range []bool{false, true} {
				q := append([]float64(nil), q0...)
				saved := Vector
				setVector(!viaGo && saved)
				AddOuter4(q, d, e, &w)
				setVector(saved)
				if i := bitDiff(q, want); i >= 0 {
					t.Fatalf("d=%d scale %g go %v: q[%d] = %v, want %v", d, sc, viaGo, i, q[i], want[i])
				}
			}
		}
	}
}

// TestSolve4MatchesScalar checks Solve4 (the assembly where the machine has it, and the Go
// reference) against the full mixture's forward substitution it replaces (criteria's
// mahalanobis), bit for bit: widths 1–40, one to five groups (pairs of groups and a last single
// one), factors of positive-definite matrices, a NaN value; nothing is written past the groups.
func TestSolve4MatchesScalar(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 6))
	for d := 1; d <= 40; d++ {
		for _, groups := range []int{1, 2, 3, 4, 5} {
			for _, sc := range []float64{1, 1e-3, 1e6} {
				n := 4 * groups
				x := make([]float64, d)
				fill(rng, x, sc)
				mu, l, inv := make([]float64, n*d), make([]float64, n*d*d), make([]float64, n*d)
				fill(rng, mu, sc)
				for r := 0; r < n; r++ {
					for a := 0; a < d; a++ {
						for b := 0; b < a; b++ {
							l[r*d*d+a*d+b] = 0.3 * rng.NormFloat64()
						}
						l[r*d*d+a*d+a] = sc * (0.5 + rng.Float64())
						inv[r*d+a] = 1 / l[r*d*d+a*d+a]
					}
				}
				if d > 2 && groups > 1 {
					mu[6*d+1] = math.NaN()
				}
				want := make([]float64, n)
				z := make([]float64, d)
				for r := range want {
					q := 0.0
					for a := 0; a < d; a++ {
						s := x[a] - mu[r*d+a]
						for b, v := range l[r*d*d+a*d : r*d*d+a*d+a] {
							s -= v * z[b]
						}
						s *= inv[r*d+a]
						z[a] = s
						q += s * s
					}
					want[r] = q
				}
				ct, lt, it := Group(nil, mu, groups, d), Group(nil, l, groups, d*d), Group(nil, inv, groups, d)
				for _, viaGo := range []bool{false, true} {
					out := make([]float64, n+2)
					out[n], out[n+1] = 5, 6
					saved := Vector
					setVector(!viaGo && saved)
					Solve4(x, ct, lt, it, groups, make([]float64, 8*d), out)
					setVector(saved)
					if r := bitDiff(out, want); r >= 0 {
						t.Fatalf("d=%d groups=%d scale %g go %v: component %d: %v, want %v", d, groups, sc, viaGo, r, out[r], want[r])
					}
					if out[n] != 5 || out[n+1] != 6 {
						t.Fatalf("d=%d groups=%d go %v: wrote past the groups", d, groups, viaGo)
					}
				}
			}
		}
	}
}
