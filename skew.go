package kgauge

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat"

	"github.com/kgauge/kgauge/sketch"
)

// skewLimit is the sample skewness above which a positive column is reported as right-skewed. A
// skewness above 1 is the usual mark of a highly skewed distribution (common practice, e.g. Bulmer
// 1979, Principles of Statistics, from memory); the uniform sample of 4,096 rows estimates it with
// a standard error of about sqrt(6/4096) = 0.04 for normal data.
const skewLimit = 1

// SkewedColumn is a feature column that looks right-skewed, and what was done about it.
type SkewedColumn struct {
	Name     string  `json:"name"`
	Skewness float64 `json:"skewness"` // sample skewness of the raw values (uniform sample)
	Positive bool    `json:"positive"` // every value > 0 (exact minimum), so --scale log applies
	Action   string  `json:"action"`
}

// ErrNonPositive is wrapped by Evaluate's error when --scale log meets a column with a value <= 0.
var ErrNonPositive = errors.New("kgauge: non-positive value")

// skewedColumns returns the columns of sk whose uniform-sample skewness exceeds skewLimit.
func skewedColumns(sk *sketch.Sketch, method Scale) []SkewedColumn {
	out := []SkewedColumn{}
	d := sk.Dims()
	x := sk.Sample()
	n := len(x) / d
	if n < 3 {
		return out
	}
	m := sk.Moments()
	col := make([]float64, n)
	names := sk.Columns()
	for j := range d {
		for i := range n {
			col[i] = x[i*d+j]
		}
		g := stat.Skew(col, nil)
		if !(g > skewLimit) {
			continue
		}
		c := SkewedColumn{Name: names[j], Skewness: g, Positive: m.Min[j] > 0}
		switch {
		case method == Log:
			c.Action = "log-scaled"
		case c.Positive:
			c.Action = "none; --scale log would take logarithms first"
		default:
			c.Action = "none; it holds values <= 0, so --scale log does not apply"
		}
		out = append(out, c)
	}
	return out
}

// checkPositive returns an error naming the first column whose exact minimum is not positive.
func checkPositive(sk *sketch.Sketch) error {
	m := sk.Moments()
	for j, name := range sk.Columns() {
		if !(m.Min[j] > 0) {
			return fmt.Errorf("%w: --scale log needs every value of column %q to be > 0, its minimum is %g",
				ErrNonPositive, name, m.Min[j])
		}
	}
	return nil
}

// logScaling returns the scaling of --scale log: the centre and spread of log x per column,
// estimated from the uniform sample (the pass keeps exact moments of x only), with the exact
// logarithms of the minimum and maximum bounding it.
func logScaling(sk *sketch.Sketch) Scaling {
	d := sk.Dims()
	sc := Scaling{Method: Log, Center: make([]float64, d), Spread: make([]float64, d), Log: true}
	x := sk.Sample()
	n := len(x) / d
	col := make([]float64, n)
	for j := range d {
		for i := range n {
			col[i] = math.Log(x[i*d+j])
		}
		sc.Center[j], sc.Spread[j] = stat.PopMeanStdDev(col, nil)
		if !(sc.Spread[j] > 0) || math.IsInf(sc.Spread[j], 0) {
			sc.Spread[j] = 1
		}
	}
	return sc
}

// logCov returns the covariance of the scaled sample (ln x − Center) / Spread per column, in the
// units Summarize divides by Spread afterwards (so it is computed on ln x − Center).
func logCov(x []float64, sc Scaling) []float64 {
	d := len(sc.Center)
	n := len(x) / d
	cov := make([]float64, d*d)
	if n == 0 {
		return cov
	}
	z := make([]float64, d)
	for i := range n {
		for j := range d {
			z[j] = math.Log(x[i*d+j]) - sc.Center[j]
		}
		for a := range d {
			for b := range d {
				cov[a*d+b] += z[a] * z[b]
			}
		}
	}
	for i := range cov {
		cov[i] /= float64(n)
	}
	return cov
}
