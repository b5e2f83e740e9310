//go:build !amd64 || purego

package lanes

// Vector is false where the kernels have no assembly: they run their Go reference.
const Vector = false

func dist2Asm(a, b []float64) float64 { return dist2Go(a, b) }

func dist2x4Asm(a, c []float64, out *[4]float64) { dist2x4Go(a, c, out) }

func dots2(x0, x1, ct []float64, groups int, out []float64) { dots2Go(x0, x1, ct, groups, out) }

func weightedRootSums(a, x, w []float64, out *[4]float64) { weightedRootSumsGo(a, x, w, out) }

func nearest2(x, ct []float64, groups int) (best int, d1, d2 float64) {
	return nearest2Go(x, ct, groups)
}

// setVector does nothing where there is no assembly (tests).
func setVector(bool) {}

func syrkRow(c, a []float64, lda, rows int) { syrkRowGo(c, a, lda, rows) }

func addMoments(x, m, s, q []float64, w float64) { addMomentsGo(x, m, s, q, w) }

func scaledDists(x, ct, st []float64, groups int, out []float64) {
	scaledDistsGo(x, ct, st, groups, out)
}

func addOuter4(q []float64, d int, e []float64, w *[4]float64) { addOuter4Go(q, d, e, w) }

func solve4(x, ct, lt, it []float64, groups int, z, out []float64) {
	solve4Go(x, ct, lt, it, groups, z, out)
}
