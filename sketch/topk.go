package sketch

// topK keeps the rows with the largest keys seen so far, with a per-row payload weight. It is a
// min-heap on key over slots of a flat point buffer, so the smallest kept key is at the root and a
// row that does not beat it costs one comparison.
type topK struct {
	cap  int       // how many rows are kept
	d    int       // row width
	keys []float64 // heap order: keys[h] is the key of slot slot[h]
	slot []int32
	pts  []float64 // cap*d, slot-addressed
	wts  []float64 // per slot
	// expect is how many rows the first allocation makes room for (at most cap): the rows the
	// input is expected to hold, when known, so that a reservoir that will fill is allocated once.
	expect int
}

// newTopK returns an empty reservoir. Its buffers are allocated when the first row arrives, with
// room for min(capacity, expectRows) rows (expectRows <= 0: unknown), and then grow as rows
// arrive, up to capacity rows, so a reservoir that never fills (a small input, a decoded file, a
// worker given no rows) holds at most twice what it keeps or what the input was expected to hold.
func newTopK(capacity, d int, expectRows int64) *topK {
	return &topK{cap: capacity, d: d, expect: int(min(int64(capacity), max(expectRows, 0)))}
}

// reserve makes room for one more row when the buffers are full: the expected rows at first,
// then twice the rows kept (at most capacity rows either way). Left to append, a buffer of more
// than 256 values grows by a quarter at a time: a full reservoir would have allocated about five
// times its size and copied four, and at 512 columns its coreset is 64 MiB (DEVELOPERS.md, issue
// 15, "Criteria stage, round 13").
func (t *topK) reserve() {
	if len(t.keys) < cap(t.keys) && len(t.pts)+t.d <= cap(t.pts) {
		return
	}
	n := min(t.cap, max(2*len(t.keys), t.expect, 16))
	t.pts = regrow(t.pts, n*t.d)
	t.wts = regrow(t.wts, n)
	t.keys = regrow(t.keys, n)
	t.slot = regrow(t.slot, n)
}

// regrow returns s in a new buffer of capacity n (not less than len(s)).
func regrow[E any](s []E, n int) []E {
	return append(make([]E, 0, n), s...)
}

// len reports how many rows are kept.
func (t *topK) len() int { return len(t.keys) }

// full reports whether a new row must beat the smallest kept key.
func (t *topK) full() bool { return len(t.keys) == t.cap }

// min returns the smallest kept key; only meaningful when len() > 0.
func (t *topK) min() float64 { return t.keys[0] }

// offer adds the row x with key and weight w if it ranks among the largest cap keys.
func (t *topK) offer(key float64, x []float64, w float64) {
	if len(t.keys) < t.cap {
		t.reserve()
		s := int32(len(t.keys))
		t.pts = append(t.pts, x...)
		t.wts = append(t.wts, w)
		t.keys = append(t.keys, key)
		t.slot = append(t.slot, s)
		t.up(len(t.keys) - 1)
		return
	}
	if key <= t.keys[0] {
		return
	}
	s := t.slot[0]
	copy(t.pts[int(s)*t.d:int(s+1)*t.d], x)
	t.wts[s] = w
	t.keys[0] = key
	t.down(0)
}

func (t *topK) up(h int) {
	for h > 0 {
		p := (h - 1) / 2
		if t.keys[p] <= t.keys[h] {
			return
		}
		t.swap(p, h)
		h = p
	}
}

func (t *topK) down(h int) {
	n := len(t.keys)
	for {
		l := 2*h + 1
		if l >= n {
			return
		}
		m := l
		if r := l + 1; r < n && t.keys[r] < t.keys[l] {
			m = r
		}
		if t.keys[h] <= t.keys[m] {
			return
		}
		t.swap(h, m)
		h = m
	}
}

func (t *topK) swap(a, b int) {
	t.keys[a], t.keys[b] = t.keys[b], t.keys[a]
	t.slot[a], t.slot[b] = t.slot[b], t.slot[a]
}

// merge offers every row of o.
func (t *topK) merge(o *topK) {
	for h, s := range o.slot {
		t.offer(o.keys[h], o.pts[int(s)*o.d:int(s+1)*o.d], o.wts[s])
	}
}

// each calls fn for the kept rows in decreasing key order, so that the output does not depend on the
// order rows were offered in.
func (t *topK) each(fn func(key float64, x []float64, w float64)) {
	order := make([]int, len(t.keys))
	for i := range order {
		order[i] = i
	}
	// Sort heap positions by key, largest first; ties broken by the row's contents for determinism.
	sortByKey(order, t)
	for _, h := range order {
		s := t.slot[h]
		fn(t.keys[h], t.pts[int(s)*t.d:int(s+1)*t.d], t.wts[s])
	}
}
