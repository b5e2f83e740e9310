package criteria

import "math"

// Kneedle returns the index of the knee of a convex decreasing curve y(x) (x increasing), such as
// WCSS against k, by the Kneedle algorithm (Satopää, Albrecht, Irwin & Raghavan 2011, "Finding a
// 'Kneedle' in a haystack: detecting knee points in system behavior", ICDCS Workshops, 166-171)
// without the optional smoothing step:
//
//	x_n = (x - min x)/(max x - min x),  y_n = (y - min y)/(max y - min y)
//	diff_i = (1 - y_n,i) - x_n,i                         (flip for a convex decreasing curve)
//	candidates: local maxima of diff; threshold T_i = diff_i - S mean_j(x_n,j+1 - x_n,j)
//	knee at candidate i if diff drops below T_i before the next local maximum
//
// S is the sensitivity (1 recommended by the paper for offline use). When several knees are
// detected the first is returned (the elbow); ok is false when none is, or the curve has fewer than
// 3 finite points or no spread. diff, if not nil (len(y)), receives the difference curve.
func Kneedle(x, y []float64, S float64, diff []float64) (idx int, ok bool) {
	n := len(x)
	if len(y) != n {
		panic("criteria: Kneedle: len(x) != len(y)")
	}
	for i := range diff {
		diff[i] = math.NaN()
	}
	if n < 3 {
		return 0, false
	}
	for i := 0; i < n; i++ {
		if math.IsNaN(y[i]) || math.IsInf(y[i], 0) {
			return 0, false
		}
	}
	x0, x1 := x[0], x[n-1]
	ymin, ymax := math.Inf(1), math.Inf(-1)
	for _, v := range y {
		ymin, ymax = math.Min(ymin, v), math.Max(ymax, v)
	}
	if !(x1 > x0) || !(ymax > ymin) {
		return 0, false
	}
	dd := make([]float64, n)
	for i := 0; i < n; i++ {
		xn := (x[i] - x0) / (x1 - x0)
		yn := (y[i] - ymin) / (ymax - ymin)
		dd[i] = (1 - yn) - xn
	}
	copy(diff, dd)
	step := 1.0 / float64(n-1) // mean spacing of x_n
	isMax := func(i int) bool {
		return i > 0 && i < n-1 && dd[i] > dd[i-1] && dd[i] >= dd[i+1]
	}
	for i := 1; i < n-1; i++ {
		if !isMax(i) {
			continue
		}
		T := dd[i] - S*step
		for j := i + 1; j < n; j++ {
			if isMax(j) {
				break // reset: a new local maximum came first
			}
			if dd[j] < T {
				return i, true
			}
		}
	}
	return 0, false
}
