package kmeans

import "github.com/kgauge/kgauge/internal/lanes"

// grouped holds k centres for a scan of every centre from one point at a time: the first
// 4·⌊k/4⌋ in groups of four, transposed for lanes.Nearest2, and when two or three are left,
// those rows padded to four with copies of the last, for lanes.Dist2x4.
type grouped struct {
	ct     []float64
	groups int
	tail   []float64 // 4·d values when k mod 4 ≥ 2, else empty
}

// load stores the centres c (k·d, row-major) for scans by nearest2.
func (g *grouped) load(c []float64, k, d int) {
	g.groups = k / 4
	g.ct = lanes.Group(g.ct, c, g.groups, d)
	g.tail = g.tail[:0]
	if rest := c[4*g.groups*d : k*d]; len(rest) >= 2*d {
		g.tail = append(g.tail, rest...)
		for len(g.tail) < 4*d {
			g.tail = append(g.tail, rest[len(rest)-d:]...)
		}
	}
}

// nearest2 is the package's nearest2 on the loaded centres c (k·d; k ≥ 4): the same sums in the
// same order (each centre's squared differences added over t one after another) and the same
// choice among them, so the same result bit for bit, with the grouped centres scanned by
// lanes.Nearest2 and the rest (past the last group of four) as nearest2 measures them (two or
// three of them by lanes.Dist2x4, whose values are Dist2's).
func (g *grouped) nearest2(x, c []float64, k, d int) (best int, d1, d2 float64) {
	best, d1, d2 = lanes.Nearest2(x, g.ct, g.groups)
	var four [4]float64
	if len(g.tail) > 0 {
		lanes.Dist2x4(x, g.tail, &four) // each equal to Dist2's value
	}
	for j := 4 * g.groups; j < k; j++ {
		v := four[j-4*g.groups]
		if len(g.tail) == 0 {
			v = Dist2(x, c[j*d:j*d+d])
		}
		if v < d1 {
			d2, d1, best = d1, v, j
		} else if v < d2 {
			d2 = v
		}
	}
	return best, d1, d2
}
