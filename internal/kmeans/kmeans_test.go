package kmeans_test

import (
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"testing"

	"github.com/kgauge/kgauge/internal/kmeans"
)

func randPoints(rng *rand.Rand, n, d int, scale float64) []float64 {
	x := make([]float64, n*d)
	for i := range x {
		x[i] = scale * rng.NormFloat64()
	}
	return x
}

// naiveAssign is the textbook (x-c)^2 loop used as the oracle for the blocked kernel.
func naiveAssign(x []float64, d int, c []float64) ([]int32, []float64) {
	n, k := len(x)/d, len(c)/d
	lab := make([]int32, n)
	dd := make([]float64, n)
	for i := 0; i < n; i++ {
		best := math.Inf(1)
		for j := 0; j < k; j++ {
			s := kmeans.Dist2(x[i*d:(i+1)*d], c[j*d:(j+1)*d])
			if s < best {
				best, lab[i] = s, int32(j)
			}
		}
		dd[i] = best
	}
	return lab, dd
}

func TestAssignMatchesNaive(t *testing.T) {
	tests := []struct{ n, d, k int }{
		{1, 1, 1}, {2, 1, 2}, {7, 3, 3}, {9, 2, 4}, {33, 16, 5}, {100, 16, 9}, {101, 5, 20}, {64, 40, 13},
		{50, 7, 16}, {51, 64, 37}, {3, 9, 8}, {10, 8, 1}, {12, 64, 2}, {11, 16, 6}, {40, 33, 7},
	}
	var reused kmeans.Assigner
	for _, tc := range tests {
		rng := rand.New(rand.NewPCG(uint64(tc.n), uint64(tc.k)))
		x := randPoints(rng, tc.n, tc.d, 1)
		c := randPoints(rng, tc.k, tc.d, 1)
		wantL, wantD := naiveAssign(x, tc.d, c)
		lab := make([]int32, tc.n)
		d2 := make([]float64, tc.n)
		kmeans.Assign(x, tc.d, c, lab, d2)
		for i := range lab {
			if lab[i] != wantL[i] {
				// A near-tie may legitimately flip; the distances must then agree.
				if math.Abs(kmeans.Dist2(x[i*tc.d:(i+1)*tc.d], c[int(lab[i])*tc.d:int(lab[i]+1)*tc.d])-wantD[i]) > 1e-12 {
					t.Fatalf("n=%d d=%d k=%d point %d: label %d, want %d", tc.n, tc.d, tc.k, i, lab[i], wantL[i])
				}
			}
			if math.Abs(d2[i]-wantD[i]) > 1e-9*(1+wantD[i]) {
				t.Fatalf("n=%d d=%d k=%d point %d: dist2 %v, want %v", tc.n, tc.d, tc.k, i, d2[i], wantD[i])
			}
		}
		// nil outputs must be accepted.
		kmeans.Assign(x, tc.d, c, nil, nil)
		// The Assigner (grouped centres, the last group filled up, and lanes.Dots2 where the
		// machine has AVX2) gives Assign's labels and distances bit for bit, also when reused
		// across k and d, and the same labels when no distance is asked for.
		lab2 := make([]int32, tc.n)
		d22 := make([]float64, tc.n)
		reused.Assign(x, tc.d, c, lab2, d22)
		for i := range lab2 {
			if lab2[i] != lab[i] || math.Float64bits(d22[i]) != math.Float64bits(d2[i]) {
				t.Fatalf("n=%d d=%d k=%d: Assigner gives (%d, %v) at %d, Assign (%d, %v)", tc.n, tc.d, tc.k, lab2[i], d22[i], i, lab[i], d2[i])
			}
		}
		lab3 := make([]int32, tc.n)
		for i := range lab3 {
			lab3[i] = -1
		}
		reused.Assign(x, tc.d, c, lab3, nil)
		if !slices.Equal(lab3, lab) {
			t.Fatalf("n=%d d=%d k=%d: Assigner's labels without distances %v, Assign's %v", tc.n, tc.d, tc.k, lab3, lab)
		}
	}
}

func TestAssignClampsAtZero(t *testing.T) {
	// A point equal to a centre far from the origin: the dot form may round below 0.
	x := []float64{1e8 + 0.1, -3e7 + 0.3, 1e8 + 0.1, -3e7 + 0.3}
	d2 := make([]float64, 2)
	kmeans.Assign(x, 2, x[:2], nil, d2)
	for _, v := range d2 {
		if v < 0 {
			t.Fatalf("negative squared distance %v", v)
		}
	}
}

func TestAssignNoAlloc(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	x := randPoints(rng, 1000, 16, 1)
	c := randPoints(rng, 20, 16, 1)
	lab := make([]int32, 1000)
	d2 := make([]float64, 1000)
	if n := testing.AllocsPerRun(10, func() { kmeans.Assign(x, 16, c, lab, d2) }); n != 0 {
		t.Fatalf("Assign allocates %v times per call", n)
	}
	var a kmeans.Assigner
	a.Assign(x, 16, c, lab, d2)
	if n := testing.AllocsPerRun(10, func() { a.Assign(x, 16, c, lab, d2) }); n != 0 {
		t.Fatalf("Assigner allocates %v times per call after the first", n)
	}
}

func TestLloydHandChecked(t *testing.T) {
	tests := []struct {
		name    string
		x, w    []float64
		init    []float64
		centres []float64
		cost    float64
		sizes   []float64
	}{
		// 1-D: {0,1} and {10,11}; means 0.5 and 10.5, cost 4 * 0.25 = 1.
		{"unit", []float64{0, 1, 10, 11}, nil, []float64{0, 1}, []float64{0.5, 10.5}, 1, []float64{2, 2}},
		// weights 3 and 1 on {0,1}: mean 0.25, cost 3*0.0625 + 0.5625 = 0.75; {10,11} w 1,1.
		{"weighted", []float64{0, 1, 10, 11}, []float64{3, 1, 1, 1}, []float64{0, 11}, []float64{0.25, 10.5}, 1.25, []float64{4, 2}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			p := kmeans.Data{X: tc.x, W: tc.w, D: 1}
			init := append([]float64(nil), tc.init...)
			r := kmeans.Lloyd(p, init, kmeans.LloydOptions{})
			for j := range tc.centres {
				if math.Abs(r.Centres[j]-tc.centres[j]) > 1e-12 || r.Sizes[j] != tc.sizes[j] {
					t.Fatalf("centres %v sizes %v, want %v %v", r.Centres, r.Sizes, tc.centres, tc.sizes)
				}
			}
			if math.Abs(r.Cost-tc.cost) > 1e-12 {
				t.Fatalf("cost %v, want %v", r.Cost, tc.cost)
			}
			if init[0] != tc.init[0] || init[1] != tc.init[1] {
				t.Fatalf("init modified")
			}
			if got := kmeans.Cost(p, r.Centres); math.Abs(got-tc.cost) > 1e-12 {
				t.Fatalf("Cost %v, want %v", got, tc.cost)
			}
		})
	}
}

func TestLloydReseedsEmpty(t *testing.T) {
	// The second initial centre is far from every point, so its cluster starts empty and must be
	// re-seeded with the farthest point; the final solution splits {0,1} from {10,11,12}.
	p := kmeans.Data{X: []float64{0, 1, 10, 11, 12}, D: 1}
	r := kmeans.Lloyd(p, []float64{5, 1000}, kmeans.LloydOptions{})
	for j, s := range r.Sizes {
		if s == 0 {
			t.Fatalf("cluster %d empty: %+v", j, r)
		}
	}
	if want := 0.5 + 2.0; math.Abs(r.Cost-want) > 1e-12 {
		t.Fatalf("cost %v, want %v", r.Cost, want)
	}
}

func TestFitFewerDistinctThanK(t *testing.T) {
	// Three distinct points repeated: k = 5 must not crash; cost 0 and total size preserved.
	x := []float64{0, 0, 1, 1, 5, 5, 0, 0, 1, 1, 5, 5}
	p := kmeans.Data{X: x, D: 2}
	r := kmeans.Fit(p, 5, kmeans.FitOptions{Restarts: 3, Rand: rand.New(rand.NewPCG(3, 4))})
	if r.Cost != 0 {
		t.Fatalf("cost %v, want 0", r.Cost)
	}
	tot := 0.0
	for _, s := range r.Sizes {
		tot += s
	}
	if tot != 6 || len(r.Centres) != 10 {
		t.Fatalf("sizes %v centres %v", r.Sizes, r.Centres)
	}
	// More centres than points.
	if r := kmeans.Fit(kmeans.Data{X: []float64{0, 1}, D: 1}, 5, kmeans.FitOptions{Restarts: 2}); r.Cost != 0 || len(r.Sizes) != 5 {
		t.Fatalf("k > n: %+v", r)
	}
	// All identical points, k = 3.
	q := kmeans.Data{X: []float64{2, 2, 2, 2}, D: 1}
	if r := kmeans.Fit(q, 3, kmeans.FitOptions{}); r.Cost != 0 {
		t.Fatalf("identical points: cost %v", r.Cost)
	}
}

func TestPlusPlus(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	x := randPoints(rng, 300, 3, 1)
	w := make([]float64, 300)
	for i := range w {
		if i%3 == 0 {
			w[i] = 0 // zero-weight points must never become centres
		} else {
			w[i] = 1 + float64(i%7)
		}
	}
	p := kmeans.Data{X: x, W: w, D: 3}
	a := kmeans.PlusPlus(p, 8, rand.New(rand.NewPCG(9, 9)), nil)
	b := kmeans.PlusPlus(p, 8, rand.New(rand.NewPCG(9, 9)), make([]float64, 3))
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("not deterministic")
		}
	}
	for j := 0; j < 8; j++ {
		found := false
		for i := 0; i < 300; i++ {
			if kmeans.Dist2(a[j*3:j*3+3], x[i*3:i*3+3]) == 0 {
				if w[i] == 0 {
					t.Fatalf("centre %d is a zero-weight point", j)
				}
				found = true
			}
		}
		if !found {
			t.Fatalf("centre %d is not a data point", j)
		}
	}
}

func TestFitBeatsSingleSeedAndUsesInit(t *testing.T) {
	// Four well-separated blobs; an Init at the true centres must be (nearly) optimal, and Fit
	// must return a cost no larger than any single Lloyd run it tried.
	rng := rand.New(rand.NewPCG(11, 12))
	centres := []float64{0, 0, 20, 0, 0, 20, 20, 20}
	var x []float64
	for i := 0; i < 400; i++ {
		j := i % 4
		x = append(x, centres[2*j]+rng.NormFloat64(), centres[2*j+1]+rng.NormFloat64())
	}
	p := kmeans.Data{X: x, D: 2}
	withInit := kmeans.Fit(p, 4, kmeans.FitOptions{Init: [][]float64{centres}})
	truth := kmeans.Lloyd(p, centres, kmeans.LloydOptions{})
	if withInit.Cost > truth.Cost*(1+1e-12) {
		t.Fatalf("Fit with Init cost %v > Lloyd from it %v", withInit.Cost, truth.Cost)
	}
	r := kmeans.Fit(p, 4, kmeans.FitOptions{Restarts: 5, Rand: rand.New(rand.NewPCG(1, 1))})
	// Optimal cost is about n*d*sigma^2 = 800; a wrong local optimum merges two blobs (>> 800).
	if r.Cost > 1.05*truth.Cost {
		t.Fatalf("Fit cost %v vs true-centre cost %v", r.Cost, truth.Cost)
	}
}

func BenchmarkAssign(b *testing.B) {
	for _, k := range []int{4, 10, 20} {
		rng := rand.New(rand.NewPCG(1, 2))
		const n, d = 4096, 16
		x := randPoints(rng, n, d, 1)
		c := randPoints(rng, k, d, 1)
		lab := make([]int32, n)
		d2 := make([]float64, n)
		b.Run("k="+string(rune('0'+k/10))+string(rune('0'+k%10)), func(b *testing.B) {
			b.ReportAllocs()
			b.SetBytes(n * d * 8)
			for b.Loop() {
				kmeans.Assign(x, d, c, lab, d2)
			}
			b.ReportMetric(float64(n*k*d)*float64(b.N)/b.Elapsed().Seconds(), "pkd/s")
		})
	}
}

func TestDist2(t *testing.T) {
	for d := 0; d < 11; d++ {
		a, b := make([]float64, d), make([]float64, d)
		want := 0.0
		for i := range a {
			a[i], b[i] = float64(i), float64(2*i+1)
			want += float64((i + 1) * (i + 1))
		}
		if got := kmeans.Dist2(a, b); got != want {
			t.Fatalf("d=%d: Dist2 = %v, want %v", d, got, want)
		}
	}
}

// naiveLloyd is textbook weighted Lloyd (assign by full scan, move to weighted means) run to a
// fixed point; the oracle for Lloyd's bounded (Hamerly) assignment.
func naiveLloyd(p kmeans.Data, init []float64) ([]float64, []int32) {
	d, k, n := p.D, len(init)/p.D, p.Len()
	c := append([]float64(nil), init...)
	lab := make([]int32, n)
	for it := 0; it < 1000; it++ {
		nl, _ := naiveAssign(p.X, d, c)
		same := it > 0
		for i := range nl {
			if nl[i] != lab[i] {
				same = false
			}
		}
		lab = nl
		if same {
			break
		}
		sum := make([]float64, k*d)
		wt := make([]float64, k)
		for i := 0; i < n; i++ {
			for t := 0; t < d; t++ {
				sum[int(lab[i])*d+t] += p.Weight(i) * p.X[i*d+t]
			}
			wt[lab[i]] += p.Weight(i)
		}
		for j := 0; j < k; j++ {
			if wt[j] > 0 {
				for t := 0; t < d; t++ {
					c[j*d+t] = sum[j*d+t] / wt[j]
				}
			}
		}
	}
	return c, lab
}

// TestLloydMatchesNaive also covers the iterations in which Lloyd moves only the changed points'
// terms of the cluster sums (few labels change): the last cases converge over dozens of
// iterations, one with every tenth point of weight 0.
func TestLloydMatchesNaive(t *testing.T) {
	for _, tc := range []struct {
		n, d, k int
		zeros   bool
	}{{200, 2, 3, false}, {500, 5, 8, false}, {300, 16, 12, false}, {100, 1, 4, false}, {4000, 2, 25, false}, {4000, 2, 25, true}} {
		rng := rand.New(rand.NewPCG(uint64(tc.n), uint64(tc.d)))
		x := randPoints(rng, tc.n, tc.d, 1)
		for i := 0; i < tc.n; i++ { // shift points into loose groups
			for t := 0; t < tc.d; t++ {
				x[i*tc.d+t] += float64(3 * (i % tc.k))
			}
		}
		w := make([]float64, tc.n)
		for i := range w {
			w[i] = 0.5 + rng.Float64()
			if tc.zeros && i%10 == 0 {
				w[i] = 0
			}
		}
		p := kmeans.Data{X: x, W: w, D: tc.d}
		init := kmeans.PlusPlus(p, tc.k, rand.New(rand.NewPCG(1, 1)), nil)
		wantC, wantL := naiveLloyd(p, init)
		r := kmeans.Lloyd(p, init, kmeans.LloydOptions{MaxIter: 1000, Tol: 1e-300})
		if tc.n >= 3000 && r.Iters < 10 {
			t.Fatalf("n=%d: %d iterations; the case should need many", tc.n, r.Iters)
		}
		for i := range wantL {
			if r.Labels[i] != wantL[i] {
				t.Fatalf("n=%d d=%d k=%d: label %d differs (%d vs %d)", tc.n, tc.d, tc.k, i, r.Labels[i], wantL[i])
			}
		}
		for j := range wantC {
			if math.Abs(r.Centres[j]-wantC[j]) > 1e-9 {
				t.Fatalf("centre value %d: %v vs %v", j, r.Centres[j], wantC[j])
			}
		}
		want := 0.0
		for i := 0; i < tc.n; i++ {
			l := int(wantL[i])
			want += w[i] * kmeans.Dist2(x[i*tc.d:(i+1)*tc.d], wantC[l*tc.d:(l+1)*tc.d])
		}
		if math.Abs(r.Cost-want) > 1e-9*want {
			t.Fatalf("cost %v, want %v", r.Cost, want)
		}
	}
}

func TestFitUniformOneDimension(t *testing.T) {
	// Uniform on [0,1]: the optimal k-means cost per point is 1/(12 k^2) (k equal cells, the
	// uniform quantiser; common practice). scikit-learn's KMeans gives 0.083197, 0.020781,
	// 0.009252, 0.003337 for k = 1, 2, 3, 5 at n = 200000 (computed for the project). We use
	// n = 20000 and a 1% tolerance.
	rng := rand.New(rand.NewPCG(12, 12))
	const n = 20000
	x := make([]float64, n)
	for i := range x {
		x[i] = rng.Float64()
	}
	p := kmeans.Data{X: x, D: 1}
	for _, k := range []int{1, 2, 3, 5} {
		r := kmeans.Fit(p, k, kmeans.FitOptions{Restarts: 3, Rand: rand.New(rand.NewPCG(1, uint64(k)))})
		got, want := r.Cost/n, 1/(12*float64(k*k))
		if math.Abs(got-want) > 0.01*want {
			t.Errorf("k=%d: cost/n %.6f, want %.6f", k, got, want)
		}
	}
}

// BenchmarkFit times a coreset-sized fit as the criteria run it (16,384 points, 16 dimensions,
// 10 blobs, k = 20, 3 k-means++ restarts).
func BenchmarkFit(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	n, d, k := 16384, 16, 20
	x := randPoints(rng, n, d, 1)
	centres := randPoints(rng, 10, d, 2)
	for i := 0; i < n; i++ {
		for t := 0; t < d; t++ {
			x[i*d+t] += centres[(i%10)*d+t]
		}
	}
	p := kmeans.Data{X: x, D: d}
	for b.Loop() {
		kmeans.Fit(p, k, kmeans.FitOptions{Restarts: 3, Rand: rand.New(rand.NewPCG(2, 2))})
	}
}

// BenchmarkPlusPlus times the greedy k-means++ seeding of 16,384 points: 10 overlapping blobs in
// 16 dimensions with k = 20, and 100 separated blobs in 2 dimensions (a grid, as Birch1) with
// k = 100.
func BenchmarkPlusPlus(b *testing.B) {
	for _, c := range []struct {
		name          string
		d, blobs, k   int
		spread, noise float64
	}{{"overlap-d16-k20", 16, 10, 20, 2, 1}, {"grid-d2-k100", 2, 100, 100, 0, 0.05}} {
		b.Run(c.name, func(b *testing.B) {
			rng := rand.New(rand.NewPCG(1, 1))
			n := 16384
			x := randPoints(rng, n, c.d, c.noise)
			centres := randPoints(rng, c.blobs, c.d, c.spread)
			if c.spread == 0 {
				for j := 0; j < c.blobs; j++ {
					centres[j*2], centres[j*2+1] = float64(j%10), float64(j/10)
				}
			}
			for i := 0; i < n; i++ {
				for t := 0; t < c.d; t++ {
					x[i*c.d+t] += centres[(i%c.blobs)*c.d+t]
				}
			}
			p := kmeans.Data{X: x, D: c.d}
			for b.Loop() {
				kmeans.PlusPlus(p, c.k, rand.New(rand.NewPCG(2, 2)), nil)
			}
		})
	}
}

// TestLloydSpreadShared checks that a Spread made once and passed to many Lloyd runs gives each
// run exactly the result it computes on its own, and that the Spread of another point set (other
// length) is not used.
func TestLloydSpreadShared(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	const n, d, k = 3000, 6, 9
	x := randPoints(rng, n, d, 1)
	for i := 0; i < n; i++ {
		x[i*d] += float64(4 * (i % k))
	}
	w := make([]float64, n)
	for i := range w {
		w[i] = 0.2 + rng.Float64()
	}
	p := kmeans.Data{X: x, W: w, D: d}
	other := kmeans.Data{X: x[:(n-10)*d], W: w[:n-10], D: d}
	shared, wrong := kmeans.NewSpread(p), kmeans.NewSpread(other)
	for s := uint64(1); s <= 3; s++ {
		init := kmeans.PlusPlus(p, k, rand.New(rand.NewPCG(s, 1)), nil)
		alone := kmeans.Lloyd(p, init, kmeans.LloydOptions{})
		for name, sp := range map[string]*kmeans.Spread{"shared": shared, "another set's": wrong} {
			got := kmeans.Lloyd(p, init, kmeans.LloydOptions{Spread: sp})
			if !reflect.DeepEqual(got, alone) {
				t.Errorf("seed %d, %s spread: cost %v in %d iterations, alone %v in %d", s, name, got.Cost, got.Iters, alone.Cost, alone.Iters)
			}
		}
	}
}
