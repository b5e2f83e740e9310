package sketch

import (
	"fmt"
	"math"
)

// FieldError is a sketch whose field holds a value no sketch built from finite rows can hold.
// [Decode] returns it (wrapped in [ErrCorrupt]) for a file whose checksum matches but whose
// contents were edited or written by a faulty program.
type FieldError struct {
	Field string // the field, e.g. "moments.s2[3]" or "coreset.weight[17]"
	Msg   string
}

func (e *FieldError) Error() string { return fmt.Sprintf("field %s: %s", e.Field, e.Msg) }

// coresetWeightSlack bounds how far the coreset's total weight, an unbiased estimate of the rows
// by priority sampling, may lie from the row count before the file is called inconsistent. It is
// loose on purpose: with the smallest coresets (2·max-k rows) and heavy outliers the estimate can
// be off by a few times; a tampered count is off by orders of magnitude.
const coresetWeightSlack = 64

// Check verifies what a sketch's fields must satisfy whatever rows were added: every number
// finite, counts, weights, keys and squared sums non-negative, units powers of two, the reservoirs
// holding exactly min(rows, capacity) rows that lie inside the bounding box, the coreset's weight
// consistent with the row count, and the mini-batch counts not exceeding the rows. The first
// violation is returned as a *[FieldError]. [Decode] calls it; a sketch built by [Sketch.Add] and
// [Sketch.Merge] from finite rows always passes.
func (s *Sketch) Check() error {
	s.wait()
	return s.check()
}

func (s *Sketch) check() (err error) {
	fail := func(field, format string, args ...any) bool {
		if err == nil {
			err = &FieldError{Field: field, Msg: fmt.Sprintf(format, args...)}
		}
		return false
	}
	finite := func(field string, v []float64) bool {
		for i, x := range v {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return fail(fmt.Sprintf("%s[%d]", field, i), "%v is not a finite number", x)
			}
		}
		return true
	}
	nonNeg := func(field string, v float64) bool {
		if !(v >= 0) || math.IsInf(v, 0) {
			return fail(field, "%v is not a finite non-negative number", v)
		}
		return true
	}
	units := func(field string, v []float64) bool {
		for i, u := range v {
			if !(u > 0) || math.IsInf(u, 0) {
				return fail(fmt.Sprintf("%s[%d]", field, i), "%v is not a positive power of two", u)
			}
			if f, _ := math.Frexp(u); f != 0.5 {
				return fail(fmt.Sprintf("%s[%d]", field, i), "%v is not a power of two", u)
			}
		}
		return true
	}
	m, c := &s.mom, &s.cross
	n := m.N
	_ = nonNeg("meta.skipped_rows", float64(s.Meta.SkippedRows)) &&
		nonNeg("meta.probe_rows", float64(s.Meta.ProbeRows)) &&
		finite("probe.centre", s.probeCentre) && nonNeg("probe.mean_sq", s.meanSq) &&
		nonNeg("moments.n", float64(n)) &&
		finite("moments.shift", m.Shift) && units("moments.unit", m.Unit) &&
		finite("moments.s1", m.S1) && finite("moments.s2", m.S2) &&
		nonNeg("cross.n", float64(c.N)) &&
		finite("cross.shift", c.Shift) && units("cross.unit", c.Unit) &&
		finite("cross.s1", c.S1) && finite("cross.c", c.C)
	if err != nil {
		return err
	}
	for j := range s.inv {
		if !(s.inv[j] > 0) || math.IsInf(s.inv[j], 0) {
			return &FieldError{Field: fmt.Sprintf("probe.inverse_scale[%d]", j), Msg: fmt.Sprintf("%v is not a positive finite number", s.inv[j])}
		}
	}
	if c.N > n {
		return &FieldError{Field: "cross.n", Msg: fmt.Sprintf("%d sampled rows of %d", c.N, n)}
	}
	for j := range m.S2 {
		switch {
		case !(m.S2[j] >= 0):
			return &FieldError{Field: fmt.Sprintf("moments.s2[%d]", j), Msg: fmt.Sprintf("%v is negative", m.S2[j])}
		case !(c.C[j*s.d+j] >= 0):
			return &FieldError{Field: fmt.Sprintf("cross.c[%d]", j*s.d+j), Msg: fmt.Sprintf("%v is a negative sum of squares", c.C[j*s.d+j])}
		case n == 0 && (m.S1[j] != 0 || m.S2[j] != 0 || !math.IsInf(m.Min[j], 1) || !math.IsInf(m.Max[j], -1)):
			return &FieldError{Field: fmt.Sprintf("moments[%d]", j), Msg: "sums or a box without rows"}
		case n > 0 && !(m.Min[j] <= m.Max[j] && !math.IsInf(m.Min[j], 0) && !math.IsInf(m.Max[j], 0)):
			return &FieldError{Field: fmt.Sprintf("moments.min[%d]", j), Msg: fmt.Sprintf("box [%v, %v] is not finite and ordered", m.Min[j], m.Max[j])}
		}
		if n > 0 {
			// Cauchy–Schwarz: (Σ d)² ≤ N Σ d², up to rounding.
			if mu := m.S1[j] / float64(n); mu*mu > m.S2[j]/float64(n)*(1+1e-6)+1e-300 {
				return &FieldError{Field: fmt.Sprintf("moments.s2[%d]", j), Msg: fmt.Sprintf("%v is smaller than the squared sum allows", m.S2[j])}
			}
			tol := 1e-6*(m.Max[j]-m.Min[j]) + 1e-9*max(math.Abs(m.Min[j]), math.Abs(m.Max[j]), math.Abs(m.Shift[j]))
			if mean := m.Shift[j] + m.Unit[j]*(m.S1[j]/float64(n)); !(mean >= m.Min[j]-tol && mean <= m.Max[j]+tol) {
				return &FieldError{Field: fmt.Sprintf("moments.s1[%d]", j), Msg: fmt.Sprintf("the mean %v lies outside the box [%v, %v]", mean, m.Min[j], m.Max[j])}
			}
		}
	}
	if err := s.checkReservoir("coreset", s.coreset, n); err != nil {
		return err
	}
	if err := s.checkReservoir("sample", s.sample, n); err != nil {
		return err
	}
	if n > 0 {
		_, w := s.Coreset()
		var total float64
		for _, v := range w {
			total += v
		}
		if !(total <= coresetWeightSlack*float64(n) && total*coresetWeightSlack >= float64(n)) {
			return &FieldError{Field: "moments.n", Msg: fmt.Sprintf("%d rows, but the coreset's weights sum to %.6g", n, total)}
		}
	}
	for i, ps := range s.parts {
		var total float64
		for pi, p := range ps {
			field := fmt.Sprintf("minibatch[k=%d][%d]", p.K, pi)
			if !finite(field+".centres", p.Centres) {
				return err
			}
			for ci, v := range p.Counts {
				if !nonNeg(fmt.Sprintf("%s.counts[%d]", field, ci), v) {
					return err
				}
				total += v
			}
		}
		if total > float64(n) {
			return &FieldError{Field: fmt.Sprintf("minibatch[k=%d]", s.cfg.MinK+i), Msg: fmt.Sprintf("counts sum to %v, more than the %d rows", total, n)}
		}
	}
	return nil
}

// checkReservoir checks that t holds min(n, capacity) rows with finite, correctly signed keys and
// weights, and rows inside the moments' box.
func (s *Sketch) checkReservoir(name string, t *topK, n int64) error {
	if want := min(n, int64(t.cap)); int64(t.len()) != want {
		return &FieldError{Field: name, Msg: fmt.Sprintf("holds %d rows, want %d for %d rows added", t.len(), want, n)}
	}
	var err error
	i := 0
	t.each(func(key float64, x []float64, w float64) {
		if err != nil {
			return
		}
		switch {
		case name == "sample" && !(key >= -1 && key < 0):
			err = &FieldError{Field: fmt.Sprintf("%s.key[%d]", name, i), Msg: fmt.Sprintf("%v is not in [-1, 0)", key)}
		case name == "coreset" && (!(key > 0) || math.IsInf(key, 0)):
			err = &FieldError{Field: fmt.Sprintf("%s.key[%d]", name, i), Msg: fmt.Sprintf("%v is not a positive finite priority", key)}
		case !(w > 0) || math.IsInf(w, 0):
			err = &FieldError{Field: fmt.Sprintf("%s.weight[%d]", name, i), Msg: fmt.Sprintf("%v is not a positive finite weight", w)}
		}
		for j, v := range x {
			if err == nil && !(v >= s.mom.Min[j] && v <= s.mom.Max[j]) {
				err = &FieldError{Field: fmt.Sprintf("%s.row[%d][%d]", name, i, j),
					Msg: fmt.Sprintf("%v is outside the column's range [%v, %v]", v, s.mom.Min[j], s.mom.Max[j])}
			}
		}
		i++
	})
	return err
}
