package sketch

import (
	"cmp"
	"slices"
)

// sortByKey orders heap positions by decreasing key; equal keys are ordered by the rows' values so the
// result is a function of the kept set alone.
func sortByKey(order []int, t *topK) {
	slices.SortFunc(order, func(a, b int) int {
		if c := cmp.Compare(t.keys[b], t.keys[a]); c != 0 {
			return c
		}
		sa, sb := int(t.slot[a]), int(t.slot[b])
		return slices.Compare(t.pts[sa*t.d:(sa+1)*t.d], t.pts[sb*t.d:(sb+1)*t.d])
	})
}
