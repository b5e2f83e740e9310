package sketch

import (
	"math"
	"slices"

	"github.com/kgauge/kgauge/internal/lanes"
)

// Moments holds exact per-column summaries of the rows added: their count, sums and sums of squares
// around a fixed shift (the probe's centre, which keeps the sums well conditioned) in a per-column
// unit, and the bounding box. The unit is a power of two near the column's spread, so dividing by it
// is exact: the sums equal the raw ones scaled by a power of two, bit for bit, and they neither
// overflow for values of 1e300 nor underflow for values of 1e-300. The zero value is not usable;
// Moments are made by [New].
type Moments struct {
	N     int64
	Shift []float64 // per column
	Unit  []float64 // per column, a power of two
	S1    []float64 // Σ (x − shift)/unit
	S2    []float64 // Σ ((x − shift)/unit)²
	Min   []float64
	Max   []float64
}

func newMoments(shift, unit []float64) Moments {
	d := len(shift)
	m := Moments{Shift: append([]float64(nil), shift...), Unit: append([]float64(nil), unit...),
		S1: make([]float64, d), S2: make([]float64, d), Min: make([]float64, d), Max: make([]float64, d)}
	for j := range d {
		m.Min[j] = math.Inf(1)
		m.Max[j] = math.Inf(-1)
	}
	return m
}

// addColumn accumulates the values col of column j (finite, raw units) into m's sums and box, and
// adds each value's squared shifted distance in units times inv2 to norm2 (setting it for column
// 0); inv2 is (unit/scale)², so norm2 gets ((x − shift)/scale)². The
// sums use two interleaved accumulators, so they do not wait on each other; the box is updated
// behind a comparison that is rarely true, because the builtin min and max of floats (which order
// NaNs and signed zeros) chain several dependent instructions per value.
func (m *Moments) addColumn(j int, col []float64, inv2 float64, norm2 []float64) {
	u := 1 / m.Unit[j] // exact: the unit is a power of two
	sh, lo, hi := m.Shift[j]*u, m.Min[j], m.Max[j]
	norm2 = norm2[:len(col)]
	var a0, a1, b0, b1 float64
	i := 0
	if j == 0 {
		for ; i+2 <= len(col); i += 2 {
			v0, v1 := col[i], col[i+1]
			d0, d1 := v0*u-sh, v1*u-sh
			q0, q1 := d0*d0, d1*d1
			a0 += d0
			a1 += d1
			b0 += q0
			b1 += q1
			norm2[i] = q0 * inv2
			norm2[i+1] = q1 * inv2
			if v0 < lo || v1 < lo {
				lo = min(lo, v0, v1)
			}
			if v0 > hi || v1 > hi {
				hi = max(hi, v0, v1)
			}
		}
	} else {
		for ; i+2 <= len(col); i += 2 {
			v0, v1 := col[i], col[i+1]
			d0, d1 := v0*u-sh, v1*u-sh
			q0, q1 := d0*d0, d1*d1
			a0 += d0
			a1 += d1
			b0 += q0
			b1 += q1
			norm2[i] += q0 * inv2
			norm2[i+1] += q1 * inv2
			if v0 < lo || v1 < lo {
				lo = min(lo, v0, v1)
			}
			if v0 > hi || v1 > hi {
				hi = max(hi, v0, v1)
			}
		}
	}
	for ; i < len(col); i++ {
		v := col[i]
		dv := v*u - sh
		q := dv * dv
		a0 += dv
		b0 += q
		if j == 0 {
			norm2[i] = q * inv2
		} else {
			norm2[i] += q * inv2
		}
		if v < lo {
			lo = v
		}
		if v > hi {
			hi = v
		}
	}
	m.S1[j] += a0 + a1
	m.S2[j] += b0 + b1
	m.Min[j], m.Max[j] = lo, hi
}

// MeanTo writes the column means into dst (allocated when nil) and returns it.
func (m *Moments) MeanTo(dst []float64) []float64 {
	dst = sized(dst, len(m.Shift))
	for j := range dst {
		dst[j] = m.Shift[j] + m.Unit[j]*(m.S1[j]/float64(m.N))
	}
	return dst
}

// VarTo writes the population variances (divisor N) into dst and returns it. A variance beyond
// the float64 range (a column of magnitude 1e160 and more) is +Inf; [Moments.StdTo] is finite for
// every finite column.
func (m *Moments) VarTo(dst []float64) []float64 {
	dst = m.UnitVarTo(dst)
	for j, v := range dst {
		dst[j] = v * m.Unit[j] * m.Unit[j]
	}
	return dst
}

// StdTo writes the population standard deviations (divisor N) into dst and returns it.
func (m *Moments) StdTo(dst []float64) []float64 {
	dst = m.UnitVarTo(dst)
	for j, v := range dst {
		dst[j] = math.Sqrt(v) * m.Unit[j]
	}
	return dst
}

// UnitVarTo writes the population variances in units² (divided by Unit[j]²) into dst and returns it.
func (m *Moments) UnitVarTo(dst []float64) []float64 {
	dst = sized(dst, len(m.Shift))
	n := float64(m.N)
	for j := range dst {
		mu := m.S1[j] / n
		v := m.S2[j]/n - mu*mu
		if !(v > 0) {
			v = 0
		}
		dst[j] = v
	}
	return dst
}

// rebase re-expresses the sums of n rows around shift sh in unit u as sums around shift a in unit
// b ≥ u (r = u/b ≤ 1, δ = (sh − a)/b):
//
//	Σ(x−a)/b = r·S1 + n·δ,  Σ((x−a)/b)² = r²·S2 + 2δ·r·S1 + n·δ²
func rebase(s1, s2 float64, n, sh, u, a, b float64) (float64, float64) {
	if sh == a && u == b {
		return s1, s2
	}
	r := u / b
	delta := sh/b - a/b
	return r*s1 + n*delta, r*r*s2 + 2*delta*r*s1 + n*delta*delta
}

// merge adds o into m, moving o's sums to m's shift and to the larger of the two units (m's own
// sums move first when o's unit is larger), so that neither side overflows.
func (m *Moments) merge(o *Moments) {
	n := float64(o.N)
	for j := range m.S1 {
		if o.Unit[j] > m.Unit[j] {
			m.S1[j], m.S2[j] = rebase(m.S1[j], m.S2[j], float64(m.N), m.Shift[j], m.Unit[j], m.Shift[j], o.Unit[j])
			m.Unit[j] = o.Unit[j]
		}
		s1, s2 := rebase(o.S1[j], o.S2[j], n, o.Shift[j], o.Unit[j], m.Shift[j], m.Unit[j])
		m.S2[j] += s2
		m.S1[j] += s1
		m.Min[j] = math.Min(m.Min[j], o.Min[j])
		m.Max[j] = math.Max(m.Max[j], o.Max[j])
	}
	m.N += o.N
}

// UnitOf returns the power of two nearest above scale's magnitude (1 for zero, infinite or NaN
// scales), the unit [Moments] keep a column's sums in.
func UnitOf(scale float64) float64 {
	if scale == 0 || math.IsInf(scale, 0) || math.IsNaN(scale) {
		return 1
	}
	_, e := math.Frexp(math.Abs(scale))
	return math.Ldexp(1, e)
}

// Cross holds the shifted sums and cross-products of a uniform Bernoulli sample of the rows, from which
// the covariance matrix is estimated. Like [Moments] it works in per-column power-of-two units.
type Cross struct {
	N     int64
	Shift []float64
	Unit  []float64 // per column, a power of two
	S1    []float64 // Σ (x − shift)/unit
	C     []float64 // d×d, Σ ((x − shift)/unit)((x − shift)/unit)ᵀ, upper triangle kept (lower mirrored on read)
}

// crossBlock is how many rows Cross.add gives each rank-k update of C. Row by row, each row's
// update reads and writes the whole upper triangle: at 512 columns that is 1 MiB, more than a
// core's cache, so every row streamed it from memory. A block of rows updates one row of the
// triangle for all of them while it is in cache (DEVELOPERS.md, issue 15, "The covariance in
// blocks of rows").
const crossBlock = 32

func newCross(shift, unit []float64) Cross {
	d := len(shift)
	return Cross{Shift: append([]float64(nil), shift...), Unit: append([]float64(nil), unit...),
		S1: make([]float64, d), C: make([]float64, d*d)}
}

// add accumulates the given number of rows, shifted and in units, dx = (x − shift)/unit, each ld
// values after the last (the first d of each used): N and S1 row by row, and C by a symmetric
// rank-k update of the upper triangle over blocks of crossBlock rows (lanes.SyrkUpper, the bits of
// gonum's Dsyrk with the triangle's values held in registers while a block's rows go by). Each
// element receives the rows' products one row at a time, in their order, each rounded before its
// sum, as a row-by-row axpy update gives them, so C has the same bits whatever the blocks and the
// stride.
func (c *Cross) add(dx []float64, ld, rows int) {
	c.addSums(dx, ld, rows)
	c.addTriangle(dx, ld, rows, 0, len(c.S1))
}

// addSums adds the rows to N and S1, the part of add outside the triangle.
func (c *Cross) addSums(dx []float64, ld, rows int) {
	d := len(c.S1)
	if d == 0 || rows == 0 {
		return
	}
	c.N += int64(rows)
	for i := range rows {
		for j, a := range dx[i*ld : i*ld+d] {
			c.S1[j] += a
		}
	}
}

// addTriangle adds the rows' products to the triangle's rows lo ≤ j < hi alone (see add; the
// same bits, and no other element touched).
func (c *Cross) addTriangle(dx []float64, ld, rows, lo, hi int) {
	d := len(c.S1)
	for r := 0; r < rows; r += crossBlock {
		lanes.SyrkUpperRows(c.C, dx[r*ld:], d, ld, min(rows-r, crossBlock), lo, hi)
	}
}

// halfTriangle returns the row j of a d×d upper triangle that splits its elements nearest to half:
// rows 0..j−1 hold d·j − j(j−1)/2 of the d(d+1)/2, half of them at the root
// j = ((2d+1) − √((2d+1)² − 2d(d+1)))/2, rounded.
func halfTriangle(d int) int {
	b := float64(2*d + 1)
	return int(math.Round((b - math.Sqrt(b*b-2*float64(d)*float64(d+1))) / 2))
}

// crossStride is how many values apart Sketch keeps the rows it holds for Cross.add: from
// paddedFrom columns, 64 bytes times an odd number (at least d, at most d+15), so that a block's
// rows fall in different sets of the cache (see lanes.SyrkUpper); below it, d: narrower rows lie
// in a few consecutive lines, and padding them would multiply the buffer (four times at two
// columns).
func crossStride(d int) int {
	if d < paddedFrom {
		return d
	}
	return d + (24-d%16)%16
}

// paddedFrom is the width from which crossStride pads the rows: at 512 bytes a row, 32 rows span
// 16 KiB, and rows a power of two apart from there fall in ever fewer cache sets.
const paddedFrom = 64

// rebase moves c to shift a and units b, b ≥ c.Unit column by column:
//
//	Σ(x−a)(x−a)ᵀ/(b bᵀ) = R C R + δ (R S1)ᵀ + (R S1) δᵀ + n δδᵀ,  R = diag(u/b),  δ = (shift − a)/b
func (c *Cross) rebase(a, b []float64) {
	d := len(c.S1)
	same := true
	for j := range d {
		same = same && c.Shift[j] == a[j] && c.Unit[j] == b[j]
	}
	if same {
		return
	}
	n := float64(c.N)
	r := make([]float64, d)
	delta := make([]float64, d)
	for j := range d {
		r[j] = c.Unit[j] / b[j]
		delta[j] = c.Shift[j]/b[j] - a[j]/b[j]
		c.S1[j] *= r[j]
	}
	for j := range d {
		for l := j; l < d; l++ {
			c.C[j*d+l] = r[j]*r[l]*c.C[j*d+l] + delta[j]*c.S1[l] + delta[l]*c.S1[j] + n*delta[j]*delta[l]
		}
	}
	for j := range d {
		c.S1[j] += n * delta[j]
	}
	copy(c.Shift, a)
	copy(c.Unit, b)
}

// merge adds o into c at c's shift and at the larger unit of each column.
func (c *Cross) merge(o *Cross) {
	d := len(c.S1)
	unit := slices.Clone(c.Unit)
	for j := range d {
		unit[j] = max(unit[j], o.Unit[j])
	}
	c.rebase(c.Shift, unit)
	oc := *o
	oc.Shift, oc.Unit, oc.S1, oc.C = slices.Clone(o.Shift), slices.Clone(o.Unit), slices.Clone(o.S1), slices.Clone(o.C)
	oc.rebase(c.Shift, c.Unit)
	for j := range d {
		for l := j; l < d; l++ {
			c.C[j*d+l] += oc.C[j*d+l]
		}
		c.S1[j] += oc.S1[j]
	}
	c.N += o.N
}

// CovTo writes the d×d covariance estimate (divisor N, row-major, symmetric) into dst and returns
// it. It is all zeros when no row was sampled. Entries beyond the float64 range (columns of
// magnitude 1e160 and more) are infinite; [Cross.UnitCovTo] is finite for every finite input.
func (c *Cross) CovTo(dst []float64) []float64 {
	dst = c.UnitCovTo(dst)
	d := len(c.S1)
	for j := range d {
		for l := range d {
			dst[j*d+l] *= c.Unit[j] * c.Unit[l]
		}
	}
	return dst
}

// UnitCovTo writes the d×d covariance estimate in units (divisor N, row-major, symmetric) into dst
// and returns it: entry (j, l) is the covariance of columns j and l divided by Unit[j]·Unit[l].
func (c *Cross) UnitCovTo(dst []float64) []float64 {
	d := len(c.S1)
	dst = sized(dst, d*d)
	if c.N == 0 {
		clear(dst)
		return dst
	}
	n := float64(c.N)
	for j := range d {
		mj := c.S1[j] / n
		for l := j; l < d; l++ {
			v := c.C[j*d+l]/n - mj*c.S1[l]/n
			dst[j*d+l] = v
			dst[l*d+j] = v
		}
	}
	return dst
}

func sized(dst []float64, n int) []float64 {
	if cap(dst) < n {
		return make([]float64, n)
	}
	return dst[:n]
}
