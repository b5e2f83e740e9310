package reduce

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
	"gonum.org/v1/gonum/mat"
)

// blobs are invented points for a property test: k Gaussian blobs in d dimensions, n points each,
// centres 6 standard deviations apart on average, and the label of each point.
func blobs(k, n, d int, seed uint64) (kmeans.Data, []int) {
	return gaussBlobs(k, n, d, 6/math.Sqrt2, rand.New(rand.NewPCG(seed, 1)))
}

// gaussBlobs draws k centres with coordinates N(0, spread²), then n unit-variance points around
// each, with weight 1, and returns them with their labels.
func gaussBlobs(k, n, d int, spread float64, rng *rand.Rand) (kmeans.Data, []int) {
	centres := make([]float64, k*d)
	for i := range centres {
		centres[i] = rng.NormFloat64() * spread
	}
	p := kmeans.Data{D: d}
	var labels []int
	for c := range k {
		for range n {
			for j := range d {
				p.X = append(p.X, centres[c*d+j]+rng.NormFloat64())
			}
			p.W = append(p.W, 1)
			labels = append(labels, c)
		}
	}
	return p, labels
}

// mapPoints returns the points of p multiplied by the d×m matrix whose entry (j, l) is at(j, l),
// computed point by point from the definition.
func mapPoints(p kmeans.Data, m int, at func(j, l int) float64) kmeans.Data {
	q := kmeans.Data{D: m, W: p.W}
	for i := range p.Len() {
		x := p.Point(i)
		for l := range m {
			var y float64
			for j := range p.D {
				y += x[j] * at(j, l)
			}
			q.X = append(q.X, y)
		}
	}
	return q
}

// cost is the k-means cost of the partition labels of p (sum of squared distances to the means).
func cost(p kmeans.Data, labels []int, k int) float64 {
	d := p.D
	mean := make([]float64, k*d)
	cnt := make([]float64, k)
	for i, l := range labels {
		cnt[l]++
		for j := range d {
			mean[l*d+j] += p.X[i*d+j]
		}
	}
	for l := range k {
		for j := range d {
			mean[l*d+j] /= cnt[l]
		}
	}
	var c float64
	for i, l := range labels {
		for j := range d {
			v := p.X[i*d+j] - mean[l*d+j]
			c += v * v
		}
	}
	return c
}

// TestProjectIsExactOnTheSummary checks that the projected summary is the summary of the
// projected points: mean, covariance (RᵀCR) and box, to rounding, when the coreset and sample are
// the whole point set.
func TestProjectIsExactOnTheSummary(t *testing.T) {
	p, _ := blobs(4, 50, 120, 3)
	m := 17
	got := Project(criteria.ExactSummary(p), m, 9)
	r := Matrix(p.D, m, 9)
	q := mapPoints(p, m, func(j, l int) float64 { return r[j*m+l] })
	want := criteria.ExactSummary(q)
	if got.D != m || got.N != want.N || got.Coreset.Len() != p.Len() || got.Sample.Len() != p.Len() {
		t.Fatalf("projected summary: D %d, N %v, %d coreset and %d sample rows", got.D, got.N, got.Coreset.Len(), got.Sample.Len())
	}
	near := func(name string, a, b []float64) {
		t.Helper()
		if len(a) != len(b) {
			t.Fatalf("%s: %d values, want %d", name, len(a), len(b))
		}
		for i := range a {
			if math.Abs(a[i]-b[i]) > 1e-9*(1+math.Abs(b[i])) {
				t.Fatalf("%s[%d] = %v, the projected points give %v", name, i, a[i], b[i])
			}
		}
	}
	near("mean", got.Mean, want.Mean)
	near("covariance", got.Cov, want.Cov)
	near("min", got.Min, want.Min)
	near("max", got.Max, want.Max)
	near("coreset", got.Coreset.X, q.X)
	if same := Project(criteria.ExactSummary(p), p.D, 9); same.D != p.D {
		t.Errorf("a projection to the input's own width changed it to %d dimensions", same.D)
	}
}

// TestProjectKeepsClusteringCost checks the property the reduction rests on (Makarychev,
// Makarychev and Razenshteyn 2019): at the dimension Dims gives, the k-means cost of the true
// partition and of a wrong one (two clusters merged) keep their values within the factor 1 ± ε,
// and their order, for several seeds, on 512-dimensional blobs.
func TestProjectKeepsClusteringCost(t *testing.T) {
	const k, d = 8, 512
	p, labels := blobs(k, 60, d, 5)
	merged := make([]int, len(labels))
	for i, l := range labels {
		merged[i] = min(l, k-2) // clusters k-2 and k-1 as one
	}
	m := Dims(d, 20)
	if m < 20 || m > 64 {
		t.Fatalf("Dims(512, 20) = %d", m)
	}
	full, wrong := cost(p, labels, k), cost(p, merged, k-1)
	for seed := range uint64(5) {
		s := Project(criteria.ExactSummary(p), m, seed)
		pc, pw := cost(s.Coreset, labels, k), cost(s.Coreset, merged, k-1)
		for _, c := range []struct {
			name      string
			got, want float64
		}{{"true partition", pc, full}, {"merged partition", pw, wrong}} {
			if r := c.got / c.want; r < 1-Epsilon || r > 1+Epsilon {
				t.Errorf("seed %d: cost of the %s is %.3g after projection, %.3g before (ratio %.3f, outside 1 ± %v)", seed, c.name, c.got, c.want, r, Epsilon)
			}
		}
		if !(pc < pw) {
			t.Errorf("seed %d: the projection ranks the merged partition (%.3g) at or below the true one (%.3g)", seed, pw, pc)
		}
	}
}

// weakBlobs are invented points for a property test: k Gaussian blobs of unit variance in d
// dimensions, n points each, whose centres lie about sep apart (not per coordinate, as in blobs),
// the shape of clusters that differ in a few directions of a wide table.
func weakBlobs(k, n, d int, sep float64, seed uint64) (kmeans.Data, []int) {
	return gaussBlobs(k, n, d, sep/math.Sqrt(2*float64(d)), rand.New(rand.NewPCG(seed, 2)))
}

// TestPrincipalIsExactOnTheSummary checks that the mapped summary is the summary of the mapped
// points, and that the components are orthonormal and ordered by variance.
func TestPrincipalIsExactOnTheSummary(t *testing.T) {
	p, _ := blobs(4, 50, 120, 3)
	m := 17
	s := criteria.ExactSummary(p)
	got, err := Principal(s, m)
	if err != nil {
		t.Fatal(err)
	}
	v, err := Components(s.Cov, p.D, m)
	if err != nil {
		t.Fatal(err)
	}
	q := mapPoints(p, m, v.At)
	want := criteria.ExactSummary(q)
	for i, a := range got.Cov {
		if math.Abs(a-want.Cov[i]) > 1e-9*(1+math.Abs(want.Cov[i])) {
			t.Fatalf("covariance[%d] = %v, the mapped points give %v", i, a, want.Cov[i])
		}
	}
	for i, a := range got.Coreset.X {
		if math.Abs(a-q.X[i]) > 1e-9*(1+math.Abs(q.X[i])) {
			t.Fatalf("coreset[%d] = %v, want %v", i, a, q.X[i])
		}
	}
	// Orthonormal columns; the mapped covariance is diagonal with decreasing variances.
	for a := range m {
		for b := range m {
			var dot float64
			for j := range p.D {
				dot += v.At(j, a) * v.At(j, b)
			}
			if want := map[bool]float64{true: 1}[a == b]; math.Abs(dot-want) > 1e-9 {
				t.Fatalf("components %d and %d: dot product %v, want %v", a, b, dot, want)
			}
			if a != b && math.Abs(got.Cov[a*m+b]) > 1e-9*got.Cov[0] {
				t.Fatalf("mapped covariance (%d, %d) = %v, want 0", a, b, got.Cov[a*m+b])
			}
		}
		if a > 0 && got.Cov[a*m+a] > got.Cov[(a-1)*m+a-1]*(1+1e-12) {
			t.Fatalf("variance of component %d (%v) above that of %d (%v)", a, got.Cov[a*m+a], a-1, got.Cov[(a-1)*m+a-1])
		}
	}
	if same, _ := Principal(s, p.D); same.D != p.D {
		t.Errorf("a map to the input's own width changed it to %d dimensions", same.D)
	}
}

// TestComponentsMatchEigenSym checks the components (taken from the singular value
// decomposition) against the eigenvectors of gonum's symmetric eigen decomposition, the direct
// definition: the same eigenvalue order and each component the same vector up to sign, to 1e-9
// where its eigenvalue stands apart from its neighbours by more than 1% (where it does not, the
// eigenvectors themselves are not determined, only the space they span), and the same spanned
// space for the m leading components in every case (the projections onto the two agree).
func TestComponentsMatchEigenSym(t *testing.T) {
	for _, c := range []struct{ k, n, d, m int }{{4, 50, 120, 17}, {16, 40, 512, 40}, {3, 30, 8, 5}} {
		p, _ := blobs(c.k, c.n, c.d, uint64(c.d))
		cov := criteria.ExactSummary(p).Cov
		got, err := Components(cov, c.d, c.m)
		if err != nil {
			t.Fatal(err)
		}
		var eig mat.EigenSym
		if !eig.Factorize(mat.NewSymDense(c.d, append([]float64(nil), cov...)), true) {
			t.Fatal("EigenSym did not converge")
		}
		vals := eig.Values(nil) // ascending
		var vecs mat.Dense
		eig.VectorsTo(&vecs)
		lambda := func(l int) float64 { return vals[c.d-1-l] }
		for l := range c.m {
			gapBelow := l+1 >= c.d || lambda(l)-lambda(l+1) > 0.01*lambda(l)
			gapAbove := l == 0 || lambda(l-1)-lambda(l) > 0.01*lambda(l-1)
			if !gapBelow || !gapAbove {
				continue
			}
			var dot float64
			for j := range c.d {
				dot += got.At(j, l) * vecs.At(j, c.d-1-l)
			}
			if math.Abs(math.Abs(dot)-1) > 1e-9 {
				t.Errorf("d=%d component %d (eigenvalue %.4g): |dot| with EigenSym's vector %v, want 1", c.d, l, lambda(l), math.Abs(dot))
			}
		}
		// The spanned space: ‖Vᵀ u‖ = 1 for each of EigenSym's leading m vectors u, when the m-th
		// eigenvalue stands apart from the next.
		if c.m < c.d && lambda(c.m-1)-lambda(c.m) > 0.01*lambda(c.m-1) {
			for l := range c.m {
				var norm2 float64
				for a := range c.m {
					var dot float64
					for j := range c.d {
						dot += got.At(j, a) * vecs.At(j, c.d-1-l)
					}
					norm2 += dot * dot
				}
				if math.Abs(norm2-1) > 1e-9 {
					t.Errorf("d=%d: EigenSym's vector %d lies %v inside the components' space, want 1", c.d, l, norm2)
				}
			}
		}
	}
}

// TestPrincipalKeepsCostDifferences checks the property the default reduction rests on (Cohen et
// al. 2015): after the map onto PrincipalDims components, the cost of a partition less the cost
// of the true partition keeps its value within 1 ± ε, for clusters that differ in a few directions
// of 512 columns. The random projection at its own dimension (Dims) keeps each cost within 1 ± ε,
// but on these clusters that relative error is larger than the difference itself: the test also
// checks that the principal components keep the difference closer than the random projection
// does, on average over seeds (the reason for the default, DEVELOPERS.md "Wide inputs").
func TestPrincipalKeepsCostDifferences(t *testing.T) {
	const k, d = 8, 512
	p, labels := weakBlobs(k, 400, d, 8, 5)
	merged := make([]int, len(labels))
	for i, l := range labels {
		merged[i] = min(l, k-2)
	}
	gap := cost(p, merged, k-1) - cost(p, labels, k)
	s := criteria.ExactSummary(p)
	m := PrincipalDims(d, 20)
	pc, err := Principal(s, m)
	if err != nil {
		t.Fatal(err)
	}
	pgap := cost(pc.Coreset, merged, k-1) - cost(pc.Coreset, labels, k)
	if r := pgap / gap; r < 1-PrincipalEpsilon || r > 1+PrincipalEpsilon {
		t.Errorf("merging two clusters costs %.4g after the principal components, %.4g before (ratio %.3f)", pgap, gap, r)
	}
	var rpErr float64
	for seed := range uint64(5) {
		rp := Project(s, Dims(d, 20), seed)
		rgap := cost(rp.Coreset, merged, k-1) - cost(rp.Coreset, labels, k)
		rpErr += math.Abs(rgap/gap-1) / 5
	}
	if pcErr := math.Abs(pgap/gap - 1); !(pcErr < rpErr) {
		t.Errorf("relative error of the merge cost: principal components %.3f, random projection %.3f on average", pcErr, rpErr)
	}
	t.Logf("merge cost kept within %.3f by %d principal components, %.3f on average by a %d-dimensional random projection",
		math.Abs(pgap/gap-1), m, rpErr, Dims(d, 20))
}
