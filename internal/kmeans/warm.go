package kmeans

// WarmSame returns the Warm start of r's own centres (Lloyd run on from r), or nil when r keeps
// no bounds.
func (r Result) WarmSame() *Warm {
	if len(r.Lower) != len(r.Labels) {
		return nil
	}
	return &Warm{Labels: r.Labels, Lower: r.Lower}
}

// WarmAdded returns the Warm start of r's centres with one more after them (number r.K), or nil
// when r keeps no bounds.
func (r Result) WarmAdded() *Warm {
	if len(r.Lower) != len(r.Labels) {
		return nil
	}
	return &Warm{Labels: r.Labels, Lower: r.Lower, Fresh: []int{r.K}}
}

// WarmMerged returns the Warm start of r's centres with centre b removed and centre a (a < b)
// replaced by a new one, such as the two merged: the points of a and b are measured against every
// centre, the others keep their centre, renumbered. It returns nil when r keeps no bounds.
func (r Result) WarmMerged(a, b int) *Warm {
	if len(r.Lower) != len(r.Labels) {
		return nil
	}
	labels := make([]int32, len(r.Labels))
	for i, l := range r.Labels {
		switch {
		case int(l) == a || int(l) == b:
			labels[i] = -1
		case int(l) > b:
			labels[i] = l - 1
		default:
			labels[i] = l
		}
	}
	return &Warm{Labels: labels, Lower: r.Lower, Fresh: []int{a}}
}
