package sketch

import "math"

// Moments holds exact per-column summaries of the rows added: their count, sums and sums of squares
// around a fixed shift (the probe's centre, which keeps the sums well conditioned), and the bounding
// box. The zero value is not usable; Moments are made by [New].
type Moments struct {
	N     int64
	Shift []float64 // per column
	S1    []float64 // Σ (x − shift)
	S2    []float64 // Σ (x − shift)²
	Min   []float64
	Max   []float64
}

func newMoments(shift []float64) Moments {
	d := len(shift)
	m := Moments{Shift: append([]float64(nil), shift...), S1: make([]float64, d), S2: make([]float64, d),
		Min: make([]float64, d), Max: make([]float64, d)}
	for j := range d {
		m.Min[j] = math.Inf(1)
		m.Max[j] = math.Inf(-1)
	}
	return m
}

// addColumn accumulates the values col of column j (finite, raw units) into m's sums and box, and
// adds each value's squared shifted distance times inv2 to norm2 (setting it for column 0). The
// sums use two interleaved accumulators, so they do not wait on each other; the box is updated
// behind a comparison that is rarely true, because the builtin min and max of floats (which order
// NaNs and signed zeros) chain several dependent instructions per value.
func (m *Moments) addColumn(j int, col []float64, inv2 float64, norm2 []float64) {
	sh, lo, hi := m.Shift[j], m.Min[j], m.Max[j]
	norm2 = norm2[:len(col)]
	var a0, a1, b0, b1 float64
	i := 0
	if j == 0 {
		for ; i+2 <= len(col); i += 2 {
			v0, v1 := col[i], col[i+1]
			d0, d1 := v0-sh, v1-sh
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
			d0, d1 := v0-sh, v1-sh
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
		dv := v - sh
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
		dst[j] = m.Shift[j] + m.S1[j]/float64(m.N)
	}
	return dst
}

// VarTo writes the population variances (divisor N) into dst and returns it.
func (m *Moments) VarTo(dst []float64) []float64 {
	dst = sized(dst, len(m.Shift))
	n := float64(m.N)
	for j := range dst {
		mu := m.S1[j] / n
		v := m.S2[j]/n - mu*mu
		if v < 0 {
			v = 0
		}
		dst[j] = v
	}
	return dst
}

// merge adds o into m, moving o's sums to m's shift:
//
//	Σ(x−a) = S1 + n·(b−a),  Σ(x−a)² = S2 + 2(b−a)·S1 + n·(b−a)²   (b = o's shift)
func (m *Moments) merge(o *Moments) {
	n := float64(o.N)
	for j := range m.S1 {
		delta := o.Shift[j] - m.Shift[j]
		m.S2[j] += o.S2[j] + 2*delta*o.S1[j] + n*delta*delta
		m.S1[j] += o.S1[j] + n*delta
		m.Min[j] = math.Min(m.Min[j], o.Min[j])
		m.Max[j] = math.Max(m.Max[j], o.Max[j])
	}
	m.N += o.N
}

// Cross holds the shifted sums and cross-products of a uniform Bernoulli sample of the rows, from which
// the covariance matrix is estimated.
type Cross struct {
	N     int64
	Shift []float64
	S1    []float64 // Σ (x − shift)
	C     []float64 // d×d, Σ (x − shift)(x − shift)ᵀ, upper triangle kept (lower mirrored on read)
}

func newCross(shift []float64) Cross {
	d := len(shift)
	return Cross{Shift: append([]float64(nil), shift...), S1: make([]float64, d), C: make([]float64, d*d)}
}

// add accumulates one shifted row dx = x − shift.
func (c *Cross) add(dx []float64) {
	d := len(dx)
	c.N++
	for j, a := range dx {
		c.S1[j] += a
		row := c.C[j*d+j : j*d+d]
		tail := dx[j:]
		for l := range row {
			row[l] += a * tail[l]
		}
	}
}

// merge adds o into c at c's shift:
//
//	Σ(x−a)(x−a)ᵀ = C + δ S1ᵀ + S1 δᵀ + n δδᵀ,  δ = b − a
func (c *Cross) merge(o *Cross) {
	d := len(c.S1)
	n := float64(o.N)
	for j := range d {
		dj := o.Shift[j] - c.Shift[j]
		for l := j; l < d; l++ {
			dl := o.Shift[l] - c.Shift[l]
			c.C[j*d+l] += o.C[j*d+l] + dj*o.S1[l] + dl*o.S1[j] + n*dj*dl
		}
	}
	for j := range d {
		c.S1[j] += o.S1[j] + n*(o.Shift[j]-c.Shift[j])
	}
	c.N += o.N
}

// CovTo writes the d×d covariance estimate (divisor N, row-major, symmetric) into dst and returns it.
// It is all zeros when no row was sampled.
func (c *Cross) CovTo(dst []float64) []float64 {
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
