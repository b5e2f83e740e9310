package sketch

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"

	"github.com/kgauge/kgauge/internal/kmeans"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// blobs returns n rows of d columns from k spherical Gaussian clusters with the given shares
// (invented property-test data), and the labels.
func blobs(rng *rand.Rand, n, d int, shares []float64, sep float64) ([]float64, []int) {
	k := len(shares)
	centres := make([]float64, k*d)
	for i := range centres {
		centres[i] = rng.NormFloat64() * sep
	}
	var total float64
	for _, s := range shares {
		total += s
	}
	x := make([]float64, n*d)
	labels := make([]int, n)
	for i := range n {
		u := rng.Float64() * total
		c := 0
		for u > shares[c] && c < k-1 {
			u -= shares[c]
			c++
		}
		labels[i] = c
		for j := range d {
			x[i*d+j] = centres[c*d+j] + rng.NormFloat64()
		}
	}
	return x, labels
}

func columns(d int) []string {
	c := make([]string, d)
	for j := range c {
		c[j] = string(rune('a' + j))
	}
	return c
}

// probeOf builds a Probe from the first rows of x, as the root package does.
func probeOf(t testing.TB, x []float64, d, maxK int) Probe {
	t.Helper()
	n := min(len(x)/d, 5000)
	p := Probe{Center: make([]float64, d), Scale: make([]float64, d), Init: map[int][]float64{}, Rows: int64(n)}
	col := make([]float64, n)
	for j := range d {
		for i := range n {
			col[i] = x[i*d+j]
		}
		p.Center[j], p.Scale[j] = stat.PopMeanStdDev(col, nil)
	}
	z := make([]float64, n*d)
	for i := range n {
		for j := range d {
			z[i*d+j] = (x[i*d+j] - p.Center[j]) / p.Scale[j]
			p.MeanSq += z[i*d+j] * z[i*d+j]
		}
	}
	p.MeanSq /= float64(n)
	rng := rand.New(rand.NewPCG(7, 7))
	for k := 1; k <= maxK; k++ {
		p.Init[k] = kmeans.PlusPlus(kmeans.Data{X: z, D: d}, k, rng, nil)
	}
	return p
}

// build feeds x to a new sketch in units of unitRows rows, numbering units from firstUnit.
func build(t testing.TB, cfg Config, p Probe, x []float64, unitRows, firstUnit int) *Sketch {
	t.Helper()
	s, err := New(cfg, p)
	if err != nil {
		t.Fatal(err)
	}
	d := len(cfg.Columns)
	for u, off := firstUnit, 0; off < len(x); u, off = u+1, off+unitRows*d {
		s.BeginUnit(u)
		end := min(len(x), off+unitRows*d)
		// Feed each unit in uneven batches: the result must not depend on batch boundaries.
		for b := off; b < end; {
			e := min(end, b+(1+(b/d)%7)*d*97)
			s.Add(x[b:e])
			b = e
		}
	}
	return s
}

func TestTopKKeepsLargest(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, capacity := range []int{1, 5, 64} {
		tk := newTopK(capacity, 1, 0)
		var all []float64
		for i := range 1000 {
			k := rng.Float64()
			all = append(all, k)
			tk.offer(k, []float64{float64(i)}, 1)
		}
		sort.Sort(sort.Reverse(sort.Float64Slice(all)))
		var got []float64
		tk.each(func(key float64, _ []float64, _ float64) { got = append(got, key) })
		if !slices.Equal(got, all[:capacity]) {
			t.Errorf("cap %d: kept %v, want %v", capacity, got, all[:capacity])
		}
	}
}

func TestMomentsExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	d := 3
	x, _ := blobs(rng, 20000, d, []float64{1, 1, 2}, 5)
	for i := range x {
		x[i] = x[i]*1000 + 1e6 // a large offset tests the shifted sums
	}
	cfg := Config{Columns: columns(d), MaxK: 4, ExpectedRows: 1} // rate 1: every row feeds the covariance
	p := probeOf(t, x, d, 4)
	s := build(t, cfg, p, x, 3000, 0)
	m := s.Moments()
	mean, variance := m.MeanTo(nil), m.VarTo(nil)
	col := make([]float64, len(x)/d)
	for j := range d {
		for i := range col {
			col[i] = x[i*d+j]
		}
		wm, wv := stat.PopMeanVariance(col, nil)
		if math.Abs(mean[j]-wm) > 1e-9*math.Abs(wm) || math.Abs(variance[j]-wv) > 1e-9*wv {
			t.Errorf("column %d: mean %v var %v, want %v %v (gonum)", j, mean[j], variance[j], wm, wv)
		}
		if m.Min[j] != slices.Min(col) || m.Max[j] != slices.Max(col) {
			t.Errorf("column %d: box [%v %v], want [%v %v]", j, m.Min[j], m.Max[j], slices.Min(col), slices.Max(col))
		}
	}
	// With every row sampled, the covariance is exact (gonum's CovarianceMatrix uses divisor n-1).
	c := s.Cross()
	if c.N != int64(len(col)) {
		t.Fatalf("covariance rows %d, want %d", c.N, len(col))
	}
	var want mat.SymDense
	stat.CovarianceMatrix(&want, mat.NewDense(len(col), d, x), nil)
	got := c.CovTo(nil)
	n := float64(len(col))
	for j := range d {
		for l := range d {
			w := want.At(j, l) * (n - 1) / n
			if math.Abs(got[j*d+l]-w) > 1e-8*math.Abs(want.At(j, j)) {
				t.Errorf("cov[%d,%d] = %v, want %v", j, l, got[j*d+l], w)
			}
		}
	}
}

// TestMergeEqualsSinglePass: the coreset and the sample of merged sketches are those of one pass
// over the union, because a row's keys depend only on the seed, its unit and its place in the unit.
func TestMergeEqualsSinglePass(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	d := 4
	x, _ := blobs(rng, 30000, d, []float64{3, 2, 1}, 4)
	cfg := Config{Columns: columns(d), MaxK: 5, CoresetSize: 500, SampleSize: 300, ExpectedRows: 30000, Seed: 11}
	p := probeOf(t, x, d, 5)
	whole := build(t, cfg, p, x, 1000, 0)
	half := 15000 * d
	a := build(t, cfg, p, x[:half], 1000, 0)
	b := build(t, cfg, p, x[half:], 1000, 15)
	if err := b.Merge(a); err != nil { // merge order must not matter either
		t.Fatal(err)
	}
	wx, ww := whole.Coreset()
	mx, mw := b.Coreset()
	if !slices.Equal(wx, mx) || !slices.Equal(ww, mw) {
		t.Errorf("merged coreset differs from the single pass (%d vs %d rows)", len(mw), len(ww))
	}
	if !slices.Equal(whole.Sample(), b.Sample()) {
		t.Error("merged uniform sample differs from the single pass")
	}
	if whole.Rows() != b.Rows() {
		t.Errorf("rows %d vs %d", b.Rows(), whole.Rows())
	}
	wm, mm := whole.Moments(), b.Moments()
	for j := range d {
		if math.Abs(wm.MeanTo(nil)[j]-mm.MeanTo(nil)[j]) > 1e-12 || math.Abs(wm.VarTo(nil)[j]-mm.VarTo(nil)[j]) > 1e-9 {
			t.Errorf("column %d: merged moments differ", j)
		}
	}
	if got := len(b.CentreSets(3)); got != 2 {
		t.Errorf("merged sketch keeps %d mini-batch parts for k=3, want 2", got)
	}
}

// TestCoresetCost checks the priority-sampled lightweight coreset against exact costs, on
// unbalanced data with small distant clusters where a uniform sample of the same size misses them
// (the failure mode described by Bachem, Lucic & Krause 2018 for uniform sampling).
func TestCoresetCost(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	d := 6
	n := 200000
	x, labels := blobs(rng, n, d, []float64{4000, 3000, 3000, 1, 1, 1}, 6)
	// Move the three small clusters far out: 400 units along their own directions.
	for i, c := range labels {
		if c >= 3 {
			x[i*d+c] += 400
		}
	}
	cfg := Config{Columns: columns(d), MaxK: 8, CoresetSize: 4000, SampleSize: 4000, ExpectedRows: int64(n), Seed: 3}
	p := probeOf(t, x, d, 8)
	s := build(t, cfg, p, x, 65536, 0)
	cx, cw := s.Coreset()
	var total float64
	for _, w := range cw {
		total += w
	}
	if math.Abs(total-float64(n))/float64(n) > 0.03 {
		t.Errorf("coreset weights sum to %.0f, want about %d", total, n)
	}
	all := kmeans.Data{X: x, D: d}
	core := kmeans.Data{X: cx, W: cw, D: d}
	uni := kmeans.Data{X: s.Sample(), D: d}
	for k := 2; k <= 8; k += 3 {
		// Centres fitted on the coreset: their cost on the coreset must match their cost on all rows.
		fit := kmeans.Fit(core, k, kmeans.FitOptions{Restarts: 2, Rand: rand.New(rand.NewPCG(1, uint64(k)))})
		exact := kmeans.Cost(all, fit.Centres)
		est := kmeans.Cost(core, fit.Centres)
		if rel := math.Abs(est-exact) / exact; rel > 0.03 {
			t.Errorf("k=%d: coreset cost %.4g vs exact %.4g (relative error %.3f)", k, est, exact, rel)
		}
	}
	// The six-cluster optimum found from the coreset is far better than one found from the uniform
	// sample, which holds few or none of the three small clusters (about 0.4 rows each in 4000).
	rc := kmeans.Fit(core, 6, kmeans.FitOptions{Restarts: 3, Rand: rand.New(rand.NewPCG(2, 2))})
	ru := kmeans.Fit(uni, 6, kmeans.FitOptions{Restarts: 3, Rand: rand.New(rand.NewPCG(2, 2))})
	cc, cu := kmeans.Cost(all, rc.Centres), kmeans.Cost(all, ru.Centres)
	if !(cc < cu/1.5) {
		t.Errorf("coreset-fitted cost %.4g is not well below uniform-sample-fitted cost %.4g", cc, cu)
	}
}

func TestSmallInputKeepsEveryRow(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 11))
	d := 2
	x, _ := blobs(rng, 300, d, []float64{1, 1}, 5)
	cfg := Config{Columns: columns(d), MaxK: 3, CoresetSize: 1000, SampleSize: 1000}
	s := build(t, cfg, probeOf(t, x, d, 3), x, 100, 0)
	cx, cw := s.Coreset()
	if len(cw) != 300 || len(cx) != 600 {
		t.Fatalf("coreset holds %d rows, want all 300", len(cw))
	}
	for _, w := range cw {
		if w != 1 {
			t.Fatalf("weight %v, want 1 when every row is kept", w)
		}
	}
	if len(s.Sample()) != 600 {
		t.Fatalf("sample holds %d values, want 600", len(s.Sample()))
	}
}

// TestAddDoesNotAllocate: Add and AddColumns allocate nothing in steady state.
func TestAddDoesNotAllocate(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 13))
	d := 8
	x, _ := blobs(rng, 40960, d, []float64{1, 1, 1}, 3)
	cfg := Config{Columns: columns(d), MaxK: 6, ExpectedRows: 1}
	s, err := New(cfg, probeOf(t, x, d, 6))
	if err != nil {
		t.Fatal(err)
	}
	s.Add(x) // warm up: reservoirs fill, assigners size themselves
	batch := x[:4096*d]
	cols := byColumn(batch, d)
	if a := testing.AllocsPerRun(5, func() { s.Add(batch) }); a != 0 {
		t.Errorf("Add allocates %v times per call", a)
	}
	if a := testing.AllocsPerRun(5, func() { s.AddColumns(cols) }); a != 0 {
		t.Errorf("AddColumns allocates %v times per call", a)
	}
}

// byColumn returns the row-major rows x (width d) by column.
func byColumn(x []float64, d int) [][]float64 {
	cols := make([][]float64, d)
	for i := 0; i < len(x)/d; i++ {
		for j := range cols {
			cols[j] = append(cols[j], x[i*d+j])
		}
	}
	return cols
}

func TestMiniBatchFindsCentres(t *testing.T) {
	rng := rand.New(rand.NewPCG(14, 15))
	d := 3
	x, labels := blobs(rng, 50000, d, []float64{1, 1, 1}, 8)
	cfg := Config{Columns: columns(d), MaxK: 3, ExpectedRows: 50000}
	s := build(t, cfg, probeOf(t, x, d, 3), x, 5000, 0)
	sets := s.CentreSets(3)
	if len(sets) != 1 {
		t.Fatalf("%d parts, want 1", len(sets))
	}
	// Each true cluster mean must have a mini-batch centre close to it (within 0.1 sd).
	means := make([]float64, 3*d)
	counts := make([]float64, 3)
	for i, c := range labels {
		counts[c]++
		for j := range d {
			means[c*d+j] += x[i*d+j]
		}
	}
	for c := range 3 {
		best := math.Inf(1)
		for e := range 3 {
			var dist float64
			for j := range d {
				v := means[c*d+j]/counts[c] - sets[0].Centres[e*d+j]
				dist += v * v
			}
			best = math.Min(best, math.Sqrt(dist))
		}
		if best > 0.1 {
			t.Errorf("cluster %d: nearest mini-batch centre is %.3f away", c, best)
		}
	}
}

func TestFileRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(16, 17))
	d := 3
	x, _ := blobs(rng, 5000, d, []float64{1, 2}, 5)
	cfg := Config{Columns: columns(d), MaxK: 4, CoresetSize: 200, SampleSize: 100, ExpectedRows: 5000, Seed: 9}
	s := build(t, cfg, probeOf(t, x, d, 4), x, 1000, 0)
	s.Meta.Sources = []string{"day=2026-11-28/part-000.parquet"}
	s.Meta.SkippedRows = 12
	var buf bytes.Buffer
	if err := s.Encode(&buf); err != nil {
		t.Fatal(err)
	}
	data := buf.Bytes()
	got, err := Decode(bytes.NewReader(data))
	if err != nil {
		t.Fatal(err)
	}
	var again bytes.Buffer
	if err := got.Encode(&again); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(data, again.Bytes()) {
		t.Error("decode then encode changed the file")
	}
	if got.Rows() != s.Rows() || got.Meta.SkippedRows != 12 || !slices.Equal(got.Meta.Sources, s.Meta.Sources) {
		t.Errorf("decoded rows %d meta %+v", got.Rows(), got.Meta)
	}
	gx, gw := got.Coreset()
	sx, sw := s.Coreset()
	if !slices.Equal(gx, sx) || !slices.Equal(gw, sw) {
		t.Error("decoded coreset differs")
	}

	bad := func(mutate func([]byte) []byte) []byte { return mutate(slices.Clone(data)) }
	for _, tc := range []struct {
		name string
		data []byte
		want error
	}{
		{"empty", nil, ErrNotSketch},
		{"random", []byte("PAR1 this is not a sketch at all, really"), ErrNotSketch},
		{"version", bad(func(b []byte) []byte { b[8] = 9; return b }), ErrVersion},
		{"flipped byte", bad(func(b []byte) []byte { b[len(b)/2] ^= 0x40; return b }), ErrCorrupt},
		{"truncated", data[:len(data)/3], ErrCorrupt},
		{"trailing", append(slices.Clone(data), 0), ErrCorrupt},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Decode(bytes.NewReader(tc.data))
			if !errors.Is(err, tc.want) {
				t.Errorf("got %v, want %v", err, tc.want)
			}
		})
	}
}

func TestConfigValidate(t *testing.T) {
	for _, tc := range []struct {
		cfg  Config
		want string
	}{
		{Config{}, "sketch: no columns"},
		{Config{Columns: []string{"a"}, MinK: 5, MaxK: 3}, "sketch: max-k (3) is less than min-k (5)"},
		{Config{Columns: []string{"a"}, MaxK: 20, CoresetSize: 10}, "sketch: coreset size 10 is too small for max-k 20 (need at least 40)"},
		{Config{Columns: []string{"a"}, MiniBatchRows: -1}, "sketch: mini-batch rows must be positive, got -1"},
	} {
		err := tc.cfg.Validate()
		if err == nil || err.Error() != tc.want {
			t.Errorf("%+v: got %v, want %q", tc.cfg, err, tc.want)
		}
	}
}

// TestAddColumnsEqualsAdd: rows given by column, in batches of other sizes than Add's chunks, give
// the same reservoirs and mini-batch centres as Add, and moments equal up to the order of summation.
func TestAddColumnsEqualsAdd(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	d := 5
	x, _ := blobs(rng, 30000, d, []float64{1, 2, 1}, 4)
	cfg := Config{Columns: columns(d), MaxK: 5, CoresetSize: 2000, SampleSize: 500, ExpectedRows: 30000, MiniBatchRows: 5000}
	p := probeOf(t, x, d, 5)
	rows := build(t, cfg, p, x, 7000, 0)
	for _, batch := range []int{1, 3, 1000, 4099} {
		s, err := New(cfg, p)
		if err != nil {
			t.Fatal(err)
		}
		cols := make([][]float64, d)
		for u, off := 0, 0; off < len(x)/d; u, off = u+1, off+7000 {
			s.BeginUnit(u)
			end := min(len(x)/d, off+7000)
			for b := off; b < end; b += batch {
				e := min(end, b+batch)
				for j := range cols {
					cols[j] = cols[j][:0]
					for i := b; i < e; i++ {
						cols[j] = append(cols[j], x[i*d+j])
					}
				}
				s.AddColumns(cols)
			}
		}
		if s.Rows() != rows.Rows() {
			t.Fatalf("batch %d: %d rows, want %d", batch, s.Rows(), rows.Rows())
		}
		gx, gw := s.Coreset()
		wx, ww := rows.Coreset()
		if !slices.Equal(gx, wx) || !slices.Equal(gw, ww) || !slices.Equal(s.Sample(), rows.Sample()) {
			t.Errorf("batch %d: the coreset or the sample differ from Add's", batch)
		}
		for k := 1; k <= 5; k++ {
			g, w := s.CentreSets(k), rows.CentreSets(k)
			if len(g) != len(w) || len(g) == 0 || !slices.Equal(g[0].Centres, w[0].Centres) {
				t.Errorf("batch %d, k=%d: mini-batch centres differ from Add's", batch, k)
			}
		}
		gm, wm := s.Moments(), rows.Moments()
		for j := range d {
			if math.Abs(gm.S1[j]-wm.S1[j]) > 1e-9*math.Sqrt(wm.S2[j]) || math.Abs(gm.S2[j]-wm.S2[j]) > 1e-12*wm.S2[j] ||
				gm.Min[j] != wm.Min[j] || gm.Max[j] != wm.Max[j] {
				t.Errorf("batch %d, column %d: moments %v %v [%v %v], want %v %v [%v %v]", batch, j,
					gm.S1[j], gm.S2[j], gm.Min[j], gm.Max[j], wm.S1[j], wm.S2[j], wm.Min[j], wm.Max[j])
			}
		}
	}
}
