//go:build !purego

package lanes

import "golang.org/x/sys/cpu"

// Vector reports whether the kernels run in AVX2 assembly (the machine has it and the operating
// system saves the wide registers); without it they run their Go reference.
var Vector = cpu.X86.HasAVX2

// setVector turns the assembly off, or back on where the machine has it (tests).
func setVector(on bool) { Vector = on && cpu.X86.HasAVX2 }

//go:noescape
func nearest2Asm(x, ct []float64, groups int) (best int, d1, d2 float64)

//go:noescape
func dist2Asm(a, b []float64) float64

//go:noescape
func dist2x4Asm(a, c []float64, out *[4]float64)

//go:noescape
func dots2Asm(x0, x1, ct []float64, groups int, out []float64)

//go:noescape
func weightedRootSumsAsm(a, x, w []float64, out *[4]float64)

func weightedRootSums(a, x, w []float64, out *[4]float64) {
	if Vector {
		weightedRootSumsAsm(a, x, w, out)
		return
	}
	weightedRootSumsGo(a, x, w, out)
}

func nearest2(x, ct []float64, groups int) (best int, d1, d2 float64) {
	if Vector {
		return nearest2Asm(x, ct, groups)
	}
	return nearest2Go(x, ct, groups)
}

func dots2(x0, x1, ct []float64, groups int, out []float64) {
	if Vector {
		dots2Asm(x0, x1, ct, groups, out)
		return
	}
	dots2Go(x0, x1, ct, groups, out)
}

//go:noescape
func syrkRowAsm(c, a []float64, lda, rows int)

func syrkRow(c, a []float64, lda, rows int) {
	if Vector {
		syrkRowAsm(c, a, lda, rows)
		return
	}
	syrkRowGo(c, a, lda, rows)
}

//go:noescape
func addMomentsAsm(x, m, s, q []float64, w float64)

func addMoments(x, m, s, q []float64, w float64) {
	if Vector {
		addMomentsAsm(x, m, s, q, w)
		return
	}
	addMomentsGo(x, m, s, q, w)
}

//go:noescape
func scaledDistsAsm(x, ct, st []float64, groups int, out []float64)

func scaledDists(x, ct, st []float64, groups int, out []float64) {
	if Vector {
		scaledDistsAsm(x, ct, st, groups, out)
		return
	}
	scaledDistsGo(x, ct, st, groups, out)
}

//go:noescape
func addOuter4Asm(q []float64, d int, e []float64, w *[4]float64)

func addOuter4(q []float64, d int, e []float64, w *[4]float64) {
	if Vector {
		addOuter4Asm(q, d, e, w)
		return
	}
	addOuter4Go(q, d, e, w)
}

//go:noescape
func solve4Asm(x, ct, lt, it []float64, groups int, z, out []float64)

func solve4(x, ct, lt, it []float64, groups int, z, out []float64) {
	if Vector {
		solve4Asm(x, ct, lt, it, groups, z, out)
		return
	}
	solve4Go(x, ct, lt, it, groups, z, out)
}
