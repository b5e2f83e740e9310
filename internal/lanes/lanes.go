// Package lanes holds the distance kernels that measure four vectors at once, one vector lane
// per vector: the centres of a k-means scan, the anchors of a silhouette, the components of a
// diagonal mixture ([ScaledDists]) and of a full one ([Solve4]); the rank-k update of the
// sketch's cross-products ([SyrkUpper]); and the moments of a mixture's M step ([AddMoments],
// [AddOuter4]). Each kernel performs
// the same floating-point operations in the same order as the scalar loop it replaces (no fused
// multiply-add), so its results are equal to that loop's bit for bit; the assembly runs where the
// machine has AVX2 ([Vector]) and the Go reference everywhere else.
//
// Four vectors of d values are stored transposed, value t of vector l at 4t + l ([Group]).
package lanes

import "math"

// Group writes the first 4·groups rows of c (row-major, d values a row) into dst in groups of
// four, transposed: value t of row 4g + l goes to dst[4d·g + 4t + l]. It returns dst, grown when
// it is too short.
func Group(dst, c []float64, groups, d int) []float64 {
	need := 4 * d * groups
	if cap(dst) < need {
		dst = make([]float64, need)
	}
	dst = dst[:need]
	for g := 0; g < groups; g++ {
		block := dst[4*d*g : 4*d*(g+1)]
		for l := 0; l < 4; l++ {
			for t, v := range c[(4*g+l)*d : (4*g+l+1)*d] {
				block[4*t+l] = v
			}
		}
	}
	return dst
}

// WeightedRootSums sets out[l] = Σ_r w[r]·√(Σ_t (a[4t+l] − x[d·r + t])²) for the four
// transposed vectors in a (one group, d = len(a)/4) and the rows r < len(w) of x, each inner sum
// added over t in order and the outer over r in order, from zero. It panics when a's length is
// not a multiple of four or x holds fewer than len(w) rows.
func WeightedRootSums(a, x, w []float64, out *[4]float64) {
	if len(a)%4 != 0 || len(x) < len(a)/4*len(w) {
		panic("lanes: WeightedRootSums: a or x too short")
	}
	if len(a) == 0 {
		weightedRootSumsGo(a, x, w, out)
		return
	}
	weightedRootSums(a, x, w, out)
}

// Dist2 returns the squared Euclidean distance between a and b (len(b) ≥ len(a)) as
// four partial sums, s_l over the t ≡ l (mod 4) below the last whole block of four and the
// rest added to s_0 in order, returned as (s_0 + s_1) + (s_2 + s_3): the scalar loop
// kmeans.Dist2 kept, whose four sums are the four lanes of one vector register here. It panics
// when b is shorter than a.
func Dist2(a, b []float64) float64 {
	b = b[:len(a)]
	if len(a) < 4 {
		// No whole block: s_0 alone, which is also the sum (s_1 = s_2 = s_3 = +0). Summed here,
		// since a call to the assembly costs more than its two or three values.
		s := 0.0
		for i, v := range a {
			t := v - b[i]
			s += t * t
		}
		return s
	}
	if Vector {
		return dist2Asm(a, b)
	}
	return dist2Go(a, b)
}

// Dist2x4 sets out[r] = Dist2(a, c[r·d : (r+1)·d]) for the four rows r of c (row-major, d =
// len(a) values a row), each equal to Dist2's result bit for bit: a is loaded once for the four
// rows. It panics when c holds fewer than four rows.
func Dist2x4(a, c []float64, out *[4]float64) {
	if len(c) < 4*len(a) {
		panic("lanes: Dist2x4: c holds fewer than four rows")
	}
	c = c[:4*len(a)]
	if Vector && len(a) > 0 {
		dist2x4Asm(a, c, out)
		return
	}
	dist2x4Go(a, c, out)
}

// dist2x4Go is Dist2x4 in Go.
func dist2x4Go(a, c []float64, out *[4]float64) {
	d := len(a)
	for r := range out {
		out[r] = dist2Go(a, c[r*d:(r+1)*d])
	}
}

// dist2Go is Dist2 in Go.
func dist2Go(a, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+3 < len(a); i += 4 {
		t0 := a[i] - b[i]
		t1 := a[i+1] - b[i+1]
		t2 := a[i+2] - b[i+2]
		t3 := a[i+3] - b[i+3]
		s0 += t0 * t0
		s1 += t1 * t1
		s2 += t2 * t2
		s3 += t3 * t3
	}
	for ; i < len(a); i++ {
		t := a[i] - b[i]
		s0 += t * t
	}
	return (s0 + s1) + (s2 + s3)
}

// Dots2 writes, for the two points x0 and x1 (d = len(x0) values each) and the 4·groups
// vectors of ct (Group), the dot products out[8g + 4p + l] = Σ_t x_p[t]·ct[4d·g + 4t + l], each
// added over t in order from zero: the sums of kmeans' 2-point × 4-centre assignment block. It
// panics when x1, ct or out is too short.
func Dots2(x0, x1, ct []float64, groups int, out []float64) {
	d := len(x0)
	if len(x1) < d || len(ct) < 4*d*groups || len(out) < 8*groups {
		panic("lanes: Dots2: x1, ct or out too short")
	}
	if groups < 1 {
		return
	}
	dots2(x0, x1[:d], ct, groups, out)
}

// dots2Go is Dots2 in Go.
func dots2Go(x0, x1, ct []float64, groups int, out []float64) {
	d := len(x0)
	for g := 0; g < groups; g++ {
		block := ct[4*d*g : 4*d*(g+1)]
		var a [8]float64
		for t, u := range x0 {
			v := x1[t]
			e0, e1, e2, e3 := block[4*t], block[4*t+1], block[4*t+2], block[4*t+3]
			a[0] += u * e0
			a[1] += u * e1
			a[2] += u * e2
			a[3] += u * e3
			a[4] += v * e0
			a[5] += v * e1
			a[6] += v * e2
			a[7] += v * e3
		}
		copy(out[8*g:8*g+8], a[:])
	}
}

// squaredDistsGo writes out[4g+l] = Σ_t (x[t] − ct[4d·g + 4t + l])² for the groups g < groups
// of four transposed vectors in ct (d = len(x)), each sum added over t in order from zero: the
// sums Nearest2 scans.
func squaredDistsGo(x, ct []float64, groups int, out []float64) {
	d := len(x)
	for g := 0; g < groups; g++ {
		block := ct[4*d*g : 4*d*(g+1)]
		var s0, s1, s2, s3 float64
		for t, v := range x {
			e0, e1, e2, e3 := v-block[4*t], v-block[4*t+1], v-block[4*t+2], v-block[4*t+3]
			s0 += e0 * e0
			s1 += e1 * e1
			s2 += e2 * e2
			s3 += e3 * e3
		}
		out[4*g], out[4*g+1], out[4*g+2], out[4*g+3] = s0, s1, s2, s3
	}
}

// weightedRootSumsGo is WeightedRootSums in Go.
func weightedRootSumsGo(a, x, w []float64, out *[4]float64) {
	d := len(a) / 4
	var t0, t1, t2, t3 float64
	for r, wr := range w {
		row := x[r*d : r*d+d]
		var s0, s1, s2, s3 float64
		for t, u := range row {
			e0, e1, e2, e3 := a[4*t]-u, a[4*t+1]-u, a[4*t+2]-u, a[4*t+3]-u
			s0 += e0 * e0
			s1 += e1 * e1
			s2 += e2 * e2
			s3 += e3 * e3
		}
		t0 += wr * math.Sqrt(s0)
		t1 += wr * math.Sqrt(s1)
		t2 += wr * math.Sqrt(s2)
		t3 += wr * math.Sqrt(s3)
	}
	*out = [4]float64{t0, t1, t2, t3}
}

// Nearest2 returns, for the 4·groups vectors of ct (Group; d = len(x)) and their squared
// distances to x (each vector's squared differences added over t in order from zero), what a scan
// of those sums in index order finds, without storing them: the index of the smallest (the first
// of equal ones; 0 when every sum is +Inf), the smallest, and the second smallest (equal to the
// smallest when two sums are equal; +Inf when there is one vector). Each lane keeps the smallest,
// second smallest and first index of its own vectors; the four are then merged. It panics when ct
// is too short or groups < 1.
func Nearest2(x, ct []float64, groups int) (best int, d1, d2 float64) {
	if groups < 1 || len(ct) < 4*len(x)*groups {
		panic("lanes: Nearest2: ct too short or no group")
	}
	return nearest2(x, ct, groups)
}

// nearest2Go is Nearest2 in Go: the per-lane scan, then the lanes merged from lane 0 (the
// assembly merges them pairwise, with the same result: the lesser smallest, the lesser index
// among equal ones, and the lesser of the winner's second and every other lane's smallest).
func nearest2Go(x, ct []float64, groups int) (best int, d1, d2 float64) {
	inf := math.Inf(1)
	m := [12]float64{inf, inf, inf, inf, inf, inf, inf, inf} // per lane: smallest, second, group
	var v [4]float64
	for g := 0; g < groups; g++ {
		squaredDistsGo(x, ct[4*len(x)*g:], 1, v[:])
		for l, s := range v {
			switch {
			case s < m[l]:
				m[4+l], m[l], m[8+l] = m[l], s, float64(g)
			case s < m[4+l]:
				m[4+l] = s
			}
		}
	}
	w := 0 // the lane holding the smallest
	best, d1 = 4*int(m[8]), m[0]
	for l := 1; l < 4; l++ {
		if i := 4*int(m[8+l]) + l; m[l] < d1 || (m[l] == d1 && i < best) {
			d1, best, w = m[l], i, l
		}
	}
	d2 = m[4+w]
	for l := 0; l < 4; l++ {
		if l != w && m[l] < d2 {
			d2 = m[l]
		}
	}
	return best, d1, d2
}

// SyrkUpper adds a's rows' products to the upper triangle of c: c[d·j + m] += a[lda·l + j]·a[lda·l + m]
// for j ≤ m < d and the rows l < rows of a (lda values apart, the first d of each used) in order,
// a row skipped for j when a[lda·l + j] is zero, each product rounded before its sum. That is what
// gonum's Dsyrk (upper, transposed, alpha and beta 1) does, one axpy per row of the triangle and
// row of a, so the bits are Dsyrk's; here the 32 values of a triangle row being added to stay in
// registers while the rows go by, where Dsyrk loads and stores them for every row. A row stride
// lda of 64 bytes times an odd number spreads the rows over the cache's sets (at 4 KiB apart, the
// rows of a 512-column block compete for the same few; DEVELOPERS.md, issue 15, "The covariance in
// blocks of rows"). It panics when lda < d, or c holds fewer than d·d values or a fewer than the
// rows.
func SyrkUpper(c, a []float64, d, lda, rows int) {
	SyrkUpperRows(c, a, d, lda, rows, 0, d)
}

// SyrkUpperRows is SyrkUpper for the rows lo ≤ j < hi of the triangle alone: the elements
// c[d·j + m], j ≤ m < d, get the same bits as from SyrkUpper, and no other element is touched, so
// goroutines may share one update between them by rows. It panics as SyrkUpper does, or when lo
// and hi are not a range within 0..d.
func SyrkUpperRows(c, a []float64, d, lda, rows, lo, hi int) {
	if rows == 0 {
		return
	}
	if lda < d || len(c) < d*d || len(a) < (rows-1)*lda+d {
		panic("lanes: SyrkUpper: c or a too short")
	}
	if lo < 0 || hi > d || lo > hi {
		panic("lanes: SyrkUpperRows: rows out of range")
	}
	for j := lo; j < hi; j++ {
		syrkRow(c[d*j+j:d*j+d], a[j:], lda, rows)
	}
}

// syrkRowGo is syrkRowAsm in Go: c[m] += a[lda·l]·a[lda·l + m] for m < len(c) and l < rows in
// order, skipping a row whose a[lda·l] is zero.
func syrkRowGo(c, a []float64, lda, rows int) {
	for l := range rows {
		row := a[lda*l : lda*l+len(c)]
		aj := row[0]
		if aj == 0 {
			continue
		}
		for m, v := range row {
			c[m] += float64(aj * v)
		}
	}
}

// AddMoments adds the w-weighted first and second moments of x about m to s and q: for each
// t < len(x), with e = x[t] − m[t] and u = w·e, s[t] += u and q[t] += u·e — the operations of
// that scalar loop (the diagonal mixture's M step), each rounded as it rounds them, so the results
// are that loop's bit for bit; in vector lanes, four values at a time, where the machine has AVX2.
// It panics when m, s or q is shorter than x.
func AddMoments(x, m, s, q []float64, w float64) {
	if len(m) < len(x) || len(s) < len(x) || len(q) < len(x) {
		panic("lanes: AddMoments: m, s or q shorter than x")
	}
	if len(x) == 0 {
		return
	}
	addMoments(x, m, s, q, w)
}

// addMomentsGo is AddMoments in Go.
func addMomentsGo(x, m, s, q []float64, w float64) {
	m, s, q = m[:len(x)], s[:len(x)], q[:len(x)]
	for t, v := range x {
		e := v - m[t]
		u := w * e
		s[t] += u
		q[t] += u * e
	}
}

// ScaledDists writes, for the point x (d = len(x) values) and the 4·groups vectors of ct with
// their scales in st (both laid out as [Group] lays out rows), out[4g + l] = Σ_t (x[t] −
// ct[4d·g + 4t + l])² · st[4d·g + 4t + l], each added over t in order from zero, the square
// rounded before its scaling: the diagonal mixture's E step, (x − μ)² / (2σ²) summed for four
// components at once. It panics when ct, st or out is too short.
func ScaledDists(x, ct, st []float64, groups int, out []float64) {
	d := len(x)
	if len(ct) < 4*d*groups || len(st) < 4*d*groups || len(out) < 4*groups {
		panic("lanes: ScaledDists: ct, st or out too short")
	}
	if groups < 1 {
		return
	}
	if d == 0 {
		clear(out[:4*groups])
		return
	}
	scaledDists(x, ct, st, groups, out)
}

// scaledDistsGo is ScaledDists in Go.
func scaledDistsGo(x, ct, st []float64, groups int, out []float64) {
	d := len(x)
	for g := 0; g < groups; g++ {
		c, s := ct[4*d*g:4*d*(g+1)], st[4*d*g:4*d*(g+1)]
		for l := 0; l < 4; l++ {
			q := 0.0
			for t, v := range x {
				e := v - c[4*t+l]
				q += e * e * s[4*t+l]
			}
			out[4*g+l] = q
		}
	}
}

// AddOuter4 adds the weighted outer products of four points to the upper triangle of the d×d
// matrix q (row-major): with e holding the points' d values one after another (e_c = e[c·d :
// (c+1)·d]) and a_c = w[c]·e_c[a], q[a·d + b] += a_0·e_0[b] + a_1·e_1[b] + a_2·e_2[b] + a_3·e_3[b]
// for every b ≥ a, the products added left to right and their sum then to q — the mixture's M
// step (criteria's outer4) and the silhouette's cluster covariances, four values of a row at a
// time, bit for bit. It panics when q or e is too short.
func AddOuter4(q []float64, d int, e []float64, w *[4]float64) {
	if d < 0 || len(q) < d*d || len(e) < 4*d {
		panic("lanes: AddOuter4: q or e too short")
	}
	if d == 0 {
		return
	}
	addOuter4(q, d, e, w)
}

// addOuter4Go is AddOuter4 in Go.
func addOuter4Go(q []float64, d int, e []float64, w *[4]float64) {
	e0, e1, e2, e3 := e[:d], e[d:2*d], e[2*d:3*d], e[3*d:4*d]
	for a := 0; a < d; a++ {
		a0, a1, a2, a3 := w[0]*e0[a], w[1]*e1[a], w[2]*e2[a], w[3]*e3[a]
		row := q[a*d+a : a*d+d]
		f0, f1, f2, f3 := e0[a:], e1[a:], e2[a:], e3[a:]
		f0, f1, f2, f3 = f0[:len(row)], f1[:len(row)], f2[:len(row)], f3[:len(row)]
		for t := range row {
			row[t] += a0*f0[t] + a1*f1[t] + a2*f2[t] + a3*f3[t]
		}
	}
}

// Solve4 writes, for the point x (d = len(x) values) and 4·groups components laid out as [Group]
// lays out rows — their means in ct (d values each), the row-major lower triangles of their
// Cholesky factors L in lt (d·d values each, the part above the diagonal not read) and the
// reciprocals of L's diagonal in it (d values each) —, out[4g + l] = ‖L⁻¹(x − μ)‖², the squared
// Mahalanobis distance, by forward substitution: for a = 0, 1, …, s = x[a] − μ[a], then s −= L[a,b]·z[b]
// for b < a in order, then z[a] = s·(1/L[a,a]) and q += z[a]², each rounded as that scalar loop
// rounds it (the full mixture's E step), so the result is that loop's bit for bit. z is scratch of
// 8·d values. It panics when a slice is too short.
func Solve4(x, ct, lt, it []float64, groups int, z, out []float64) {
	d := len(x)
	if len(ct) < 4*d*groups || len(it) < 4*d*groups || len(lt) < 4*d*d*groups || len(z) < 8*d || len(out) < 4*groups {
		panic("lanes: Solve4: a slice is too short")
	}
	if groups < 1 {
		return
	}
	if d == 0 {
		clear(out[:4*groups])
		return
	}
	solve4(x, ct, lt, it, groups, z, out)
}

// solve4Go is Solve4 in Go.
func solve4Go(x, ct, lt, it []float64, groups int, z, out []float64) {
	d := len(x)
	for g := 0; g < groups; g++ {
		c, l, iv := ct[4*d*g:4*d*(g+1)], lt[4*d*d*g:4*d*d*(g+1)], it[4*d*g:4*d*(g+1)]
		for k := 0; k < 4; k++ {
			q := 0.0
			for a := 0; a < d; a++ {
				s := x[a] - c[4*a+k]
				for b := 0; b < a; b++ {
					s -= l[4*(a*d+b)+k] * z[4*b+k]
				}
				s *= iv[4*a+k]
				z[4*a+k] = s
				q += s * s
			}
			out[4*g+k] = q
		}
	}
}
