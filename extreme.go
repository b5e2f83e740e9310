package kgauge

import (
	"errors"
	"fmt"
	"math"

	"github.com/kgauge/kgauge/sketch"
	"gonum.org/v1/gonum/stat"
)

// ErrUnrepresentable is returned with --scale none (Raw) when a column's values cannot be
// clustered in their own units: squared distances would overflow or underflow float64.
var ErrUnrepresentable = errors.New("kgauge: values out of range for unscaled clustering")

// RawLimit bounds the columns a Raw (unscaled) run accepts: every value's magnitude at most
// RawLimit and a nonzero range at least 1/RawLimit. Squares of 1e140 summed over 1e28 values stay
// below the float64 maximum (1.8e308), and squares of 1e-140 stay far above its smallest normal
// number (2.2e-308). The zscore and range scalings have no such limit.
const RawLimit = 1e140

// meanStd returns the population mean and standard deviation of col without overflow or underflow
// for any finite values: it divides by the power of two above the largest magnitude first (exact,
// so ordinary data gives the same bits as the direct computation) and multiplies back. col is
// overwritten.
func meanStd(col []float64) (mean, std float64) {
	var top float64
	for _, v := range col {
		top = max(top, math.Abs(v))
	}
	if top == 0 || math.IsInf(top, 0) || math.IsNaN(top) {
		mean, variance := stat.PopMeanVariance(col, nil)
		return mean, math.Sqrt(variance)
	}
	_, e := math.Frexp(top)
	if e > -1000 && e < 1000 {
		// 2^-e is a normal number: one correctly rounded product, the same bits as Ldexp, at a
		// fraction of its cost (the probe's columns, issue 15).
		f := math.Ldexp(1, -e)
		for i, v := range col {
			col[i] = v * f
		}
	} else {
		for i, v := range col {
			col[i] = math.Ldexp(v, -e)
		}
	}
	mean, variance := stat.PopMeanVariance(col, nil)
	return math.Ldexp(mean, e), math.Ldexp(math.Sqrt(variance), e)
}

// checkRaw reports the first column whose box [lo[j], hi[j]] cannot be clustered unscaled.
func checkRaw(columns []string, lo, hi []float64) error {
	for j := range lo {
		if lo[j] > hi[j] {
			continue // no rows
		}
		top := max(math.Abs(lo[j]), math.Abs(hi[j]))
		span := hi[j] - lo[j]
		if top > RawLimit || (span > 0 && span < 1/RawLimit) {
			return fmt.Errorf("%w: column %q holds values from %g to %g; --scale none needs magnitudes up to %g and a spread of 0 or at least %g (use --scale zscore or range)",
				ErrUnrepresentable, columns[j], lo[j], hi[j], RawLimit, 1/RawLimit)
		}
	}
	return nil
}

// checkRawSketch is checkRaw on a sketch's exact box.
func checkRawSketch(sk *sketch.Sketch) error {
	m := sk.Moments()
	return checkRaw(sk.Columns(), m.Min, m.Max)
}

// MaxColumns is the widest input an estimate accepts. Above 64 columns the criteria run on a random
// projection of the summary (Options.Reduce, sketch/reduce), so no d×d eigen decomposition is made
// by default; the bound stands for what the reduction does not remove: the sampled covariance
// costs d² per fed row in the pass and d² floats in every worker's sketch and sketch file (8 MB at
// 1000 columns, 200 MB at 5000), and `--reduce off` still decomposes d×d. Wider data needs its
// columns chosen (--columns).
const MaxColumns = 1000

// ErrTooWide is returned for an input with more than MaxColumns feature columns.
var ErrTooWide = errors.New("kgauge: too many columns (choose at most 1000 with --columns)")
