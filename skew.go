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

// symmetricLimit is the largest |skewness| of ln x at which --scale auto takes the logarithm of a
// right-skewed positive column: below 0.5 a distribution is usually called approximately
// symmetric (common practice, the same source as skewLimit, from memory). A log-normal column
// (ln x Gaussian) is near 0; a column skewed because a few small clusters lie far above a large
// one stays skewed after the logarithm (Fränti's Unbalance: 2.9 raw, 2.2 after), and its
// geometry is left alone.
const symmetricLimit = 0.5

// SkewedColumn is a feature column that looks right-skewed, and what was done about it.
type SkewedColumn struct {
	Name        string   `json:"name"`
	Skewness    float64  `json:"skewness"`               // sample skewness of the raw values (uniform sample)
	LogSkewness *float64 `json:"log_skewness,omitempty"` // sample skewness of ln x, when every value > 0
	Positive    bool     `json:"positive"`               // every value > 0 (exact minimum), so a logarithm applies
	Action      string   `json:"action"`
}

// ErrNonPositive is wrapped by Evaluate's error when --scale log meets a column with a value <= 0.
var ErrNonPositive = errors.New("kgauge: non-positive value")

// columnSkew is the sample skewness of one column's raw values and, when every value of the
// column is positive (exact minimum), of their logarithms (NaN otherwise).
type columnSkew struct{ raw, log float64 }

// columnSkews measures every column of sk on its uniform sample; nil when it holds fewer than
// three rows.
func columnSkews(sk *sketch.Sketch) []columnSkew {
	d := sk.Dims()
	x := sk.Sample()
	n := len(x) / d
	if n < 3 {
		return nil
	}
	m := sk.Moments()
	col := make([]float64, n)
	out := make([]columnSkew, d)
	for j := range d {
		for i := range n {
			col[i] = x[i*d+j]
		}
		out[j] = columnSkew{raw: stat.Skew(col, nil), log: math.NaN()}
		if m.Min[j] > 0 {
			for i := range col {
				col[i] = math.Log(col[i])
			}
			out[j].log = stat.Skew(col, nil)
		}
	}
	return out
}

// autoLogs marks the columns --scale auto takes logarithms of: every value positive, skewness
// above skewLimit, and the logarithm's skewness within ±symmetricLimit. Nil when none.
func autoLogs(sk *sketch.Sketch) []bool {
	var out []bool
	for j, c := range columnSkews(sk) {
		if c.raw > skewLimit && math.Abs(c.log) <= symmetricLimit {
			if out == nil {
				out = make([]bool, sk.Dims())
			}
			out[j] = true
		}
	}
	return out
}

// skewedColumns returns the columns of sk whose uniform-sample skewness exceeds skewLimit, with
// what the scaling sc did to each.
func skewedColumns(sk *sketch.Sketch, sc Scaling) []SkewedColumn {
	out := []SkewedColumn{}
	names := sk.Columns()
	for j, g := range columnSkews(sk) {
		if !(g.raw > skewLimit) {
			continue
		}
		c := SkewedColumn{Name: names[j], Skewness: g.raw, Positive: !math.IsNaN(g.log)}
		if c.Positive {
			c.LogSkewness = &g.log
		}
		switch {
		case sc.logs(j) && sc.Method == Auto:
			c.Action = fmt.Sprintf("log-scaled: its logarithm is close to symmetric (skewness %.2f)", g.log)
		case sc.logs(j):
			c.Action = "log-scaled"
		case c.Positive && sc.Method == Auto:
			c.Action = fmt.Sprintf("none; its logarithm is skewed too (skewness %.2f), as when a few groups lie far above the rest; --scale log would take logarithms of every column", g.log)
		case c.Positive:
			c.Action = "none; --scale log would take logarithms first"
		default:
			c.Action = "none; it holds values <= 0, so no logarithm applies"
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

// logColumns turns the columns of sc marked in logged into logarithmic ones: the centre and spread
// of ln x, estimated from the uniform sample (the pass keeps exact moments of x only), with the
// exact logarithms of the minimum and maximum bounding it.
func logColumns(sk *sketch.Sketch, sc Scaling, logged []bool) Scaling {
	if logged == nil {
		return sc
	}
	d := sk.Dims()
	sc.Logged = logged
	x := sk.Sample()
	n := len(x) / d
	col := make([]float64, n)
	for j := range d {
		if !logged[j] {
			continue
		}
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
