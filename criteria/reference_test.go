package criteria_test

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"testing"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

// The reference values in testdata/reference/reference.json were computed by
// testdata/reference/make_reference.py with scikit-learn 1.2.1 and SciPy 1.10.1 (Debian
// python3-sklearn, python3-scipy); see the script for exactly which calls.

type refGMM struct {
	Weights, Means, Vars []float64
	Loglik, BIC, AIC     float64
}

type refGMMFull struct {
	Weights, Means, Covs      []float64
	Loglik, BIC, AIC, Entropy float64
}

type refK struct {
	Labels           []int32
	Inertia          float64
	Silhouette       *float64
	CalinskiHarabasz *float64 `json:"calinski_harabasz"`
	DaviesBouldin    *float64 `json:"davies_bouldin"`
	GMM              refGMM
	GMMFull          refGMMFull      `json:"gmm_full"`
	GMMSpherical     refGMMSpherical `json:"gmm_spherical"`
}

// refGMMSpherical is scikit-learn's GaussianMixture(covariance_type="spherical"): one variance
// per component.
type refGMMSpherical struct {
	Weights, Means, Vars      []float64
	Loglik, BIC, AIC, Entropy float64
}

type refSet struct {
	File        string
	N, D        int
	PerK        map[string]refK `json:"per_k"`
	WardHeights []float64       `json:"ward_heights"`
}

type reference struct {
	Versions map[string]string
	Sets     map[string]refSet
}

const refDir = "../testdata/reference"

func readReference(t *testing.T, path string) reference {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var r reference
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	if len(r.Sets) == 0 {
		t.Fatalf("%s: no point sets", path)
	}
	return r
}

func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Max(math.Abs(want), 1e-300) }

// checkReference compares our criteria with the scikit-learn / SciPy values in ref.
func checkReference(t *testing.T, ref reference) {
	names := make([]string, 0, len(ref.Sets))
	for n := range ref.Sets {
		names = append(names, n)
	}
	slices.Sort(names)
	for _, name := range names {
		set := ref.Sets[name]
		p := mustLoad(t, filepath.Join(refDir, set.File))
		if p.Len() != set.N || p.D != set.D {
			t.Fatalf("%s: loaded %d x %d, reference says %d x %d", name, p.Len(), p.D, set.N, set.D)
		}
		t.Run(name, func(t *testing.T) {
			var ks []int
			for s := range set.PerK {
				k, _ := strconv.Atoi(s)
				ks = append(ks, k)
			}
			slices.Sort(ks)
			for _, k := range ks {
				r := set.PerK[strconv.Itoa(k)]
				if len(r.Labels) != p.Len() {
					t.Fatalf("k=%d: %d labels for %d points", k, len(r.Labels), p.Len())
				}
				if k >= 2 {
					// sklearn.metrics.silhouette_score: exact mean silhouette, to 1e-9.
					if got := criteria.SilhouetteExact(p, r.Labels, k); math.Abs(got-*r.Silhouette) > 1e-9 {
						t.Errorf("k=%d: SilhouetteExact %.12f, sklearn %.12f", k, got, *r.Silhouette)
					}
					// Anchors >= n: every stratum is evaluated exactly, so the estimate is exact.
					est := criteria.SilhouetteAnchors(p, r.Labels, k, 10*p.Len(), rand.New(rand.NewPCG(1, 1)))
					if math.Abs(est.Mean-*r.Silhouette) > 1e-9 || est.SE != 0 {
						t.Errorf("k=%d: SilhouetteAnchors(all) %.12f±%g, sklearn %.12f", k, est.Mean, est.SE, *r.Silhouette)
					}
					// sklearn.metrics.calinski_harabasz_score / davies_bouldin_score, to 1e-9 relative.
					if got := criteria.CalinskiHarabasz(p, r.Labels, k); relErr(got, *r.CalinskiHarabasz) > 1e-9 {
						t.Errorf("k=%d: CalinskiHarabasz %.12g, sklearn %.12g", k, got, *r.CalinskiHarabasz)
					}
					if got := criteria.DaviesBouldin(p, r.Labels, k); relErr(got, *r.DaviesBouldin) > 1e-9 {
						t.Errorf("k=%d: DaviesBouldin %.12g, sklearn %.12g", k, got, *r.DaviesBouldin)
					}
				}
				// sklearn KMeans(n_init=10).inertia_: our best of 100 k-means++ restarts no more than
				// 0.5% above it. One-sided, since both are local optima. 100 rather than 10 restarts:
				// on Ruspini k=6 a single greedy k-means++ seeding reaches the best optimum about 5% of
				// the time for sklearn (n_init=1, 300 random states) and for ours alike (measured when
				// this test was written), so sklearn's best of 10 found it by luck (P about 0.42).
				fit := kmeans.Fit(p, k, kmeans.FitOptions{Restarts: 100, Rand: rand.New(rand.NewPCG(7, uint64(k)))})
				if fit.Cost > r.Inertia*1.005 {
					t.Errorf("k=%d: k-means cost %.8g > 1.005 * sklearn inertia %.8g", k, fit.Cost, r.Inertia)
				}
				if fit.Cost < r.Inertia*(1-0.005) {
					t.Logf("k=%d: our k-means cost %.8g is below sklearn's inertia %.8g", k, fit.Cost, r.Inertia)
				}
				// GaussianMixture(diag).score_samples(X).sum() for sklearn's fitted parameters: our
				// log-likelihood of the same parameters to 1e-9 relative.
				g := criteria.GMM{K: k, D: p.D, Weights: r.GMM.Weights, Means: r.GMM.Means, Vars: r.GMM.Vars}
				if got := g.LogLik(p, nil); relErr(got, r.GMM.Loglik) > 1e-9 {
					t.Errorf("k=%d: GMM log-likelihood %.12g, sklearn %.12g", k, got, r.GMM.Loglik)
				}
				// GaussianMixture.bic / aic from the same EM start (the KMeans labels; see the script):
				// same EM, so to 1e-6 relative (both stop at a tolerance of 1e-10 per point).
				np := criteria.GMMParams(k, p.D)
				n := float64(p.Len())
				start := fromLabels(p, r.Labels, k)
				_, ll, _ := criteria.GMMFit(p, start, criteria.GMMOptions{MaxIter: 5000, Tol: 1e-10, Reg: 1e-6})
				if got := criteria.BIC(ll, np, n); relErr(got, r.GMM.BIC) > 1e-6 {
					t.Errorf("k=%d: GMM BIC from sklearn's start %.10g, sklearn %.10g", k, got, r.GMM.BIC)
				}
				if got := criteria.AIC(ll, np); relErr(got, r.GMM.AIC) > 1e-6 {
					t.Errorf("k=%d: GMM AIC from sklearn's start %.10g, sklearn %.10g", k, got, r.GMM.AIC)
				}
				// From our own k-means fit and the default EM settings (Evaluate's path) the BIC may
				// reach another local optimum; it must not be more than 2% (of |BIC|) worse.
				_, ll2, _ := criteria.GMMFit(p, fit, criteria.GMMOptions{Reg: 1e-6})
				if got := criteria.BIC(ll2, np, n); got > r.GMM.BIC+0.02*math.Abs(r.GMM.BIC) {
					t.Errorf("k=%d: GMM BIC from our k-means fit %.8g, sklearn %.8g (> 2%% worse)", k, got, r.GMM.BIC)
				}
				checkFullGMM(t, p, k, r, fit)
				checkSphericalGMM(t, p, k, r.GMMSpherical, fromLabels(p, r.Labels, k))
				// The parameter count matches sklearn's (BIC - AIC = p (ln n - 2)).
				if pd := (r.GMM.BIC - r.GMM.AIC) / (math.Log(n) - 2); math.Abs(pd-float64(np)) > 1e-6*float64(np) {
					t.Errorf("k=%d: sklearn's parameter count %.6f, GMMParams %d", k, pd, np)
				}
			}
			// scipy.cluster.hierarchy.linkage(method="ward") heights are sqrt(2 * merge cost) of our
			// WardLinkage (unit weights); compared sorted, to 1e-9 relative.
			merges := criteria.WardLinkage(p)
			if len(merges) != len(set.WardHeights) {
				t.Fatalf("%d merges, scipy %d", len(merges), len(set.WardHeights))
			}
			got := make([]float64, len(merges))
			for i, m := range merges {
				got[i] = math.Sqrt(2 * m.Cost)
			}
			want := slices.Clone(set.WardHeights)
			slices.Sort(got)
			slices.Sort(want)
			for i := range got {
				if relErr(got[i], want[i]) > 1e-9 {
					t.Errorf("Ward height %d: sqrt(2*cost) %.12g, scipy %.12g", i, got[i], want[i])
					break
				}
			}
		})
	}
}

// checkSphericalGMM compares the spherical mixture (GMMOptions.Spherical) with scikit-learn's
// GaussianMixture(covariance_type="spherical", reg_covar=1e-6) started from the same k-means labels
// (see make_reference.py): the log-likelihood and classification entropy of sklearn's parameters
// to 1e-9 relative, the parameter count exactly, and BIC, AIC and entropy of our EM from the
// same start (both stopped at 1e-10 per point) to 1e-6 relative (the entropy to 1e-4).
func checkSphericalGMM(t *testing.T, p kmeans.Data, k int, r refGMMSpherical, start kmeans.Result) {
	t.Helper()
	if len(r.Vars) != k {
		t.Fatalf("k=%d: reference has %d spherical variances, want %d", k, len(r.Vars), k)
	}
	vars := make([]float64, 0, k*p.D)
	for _, v := range r.Vars {
		for range p.D {
			vars = append(vars, v)
		}
	}
	g := criteria.GMM{K: k, D: p.D, Weights: r.Weights, Means: r.Means, Vars: vars}
	if got := g.LogLik(p, nil); relErr(got, r.Loglik) > 1e-9 {
		t.Errorf("k=%d: spherical GMM log-likelihood %.12g, sklearn %.12g", k, got, r.Loglik)
	}
	if got := g.ClassEntropy(p); math.Abs(got-r.Entropy) > 1e-9*max(1, math.Abs(r.Entropy)) {
		t.Errorf("k=%d: spherical GMM classification entropy %.12g, sklearn %.12g", k, got, r.Entropy)
	}
	np := criteria.FamilySpherical.Params(k, p.D)
	n := float64(p.Len())
	if pd := (r.BIC - r.AIC) / (math.Log(n) - 2); math.Abs(pd-float64(np)) > 1e-6*float64(np) {
		t.Errorf("k=%d: sklearn's spherical parameter count %.6f, ours %d", k, pd, np)
	}
	fit, ll, _ := criteria.GMMFit(p, start, criteria.GMMOptions{MaxIter: 5000, Tol: 1e-10, Reg: 1e-6, Spherical: true})
	if got := criteria.BIC(ll, np, n); relErr(got, r.BIC) > 1e-6 {
		t.Errorf("k=%d: spherical GMM BIC from sklearn's start %.10g, sklearn %.10g", k, got, r.BIC)
	}
	if got := criteria.AIC(ll, np); relErr(got, r.AIC) > 1e-6 {
		t.Errorf("k=%d: spherical GMM AIC from sklearn's start %.10g, sklearn %.10g", k, got, r.AIC)
	}
	// The entropy, unlike the log-likelihood, is not stationary where EM stops, so the two EMs'
	// last small steps show in it: 1e-4 relative (measured: at most 3e-5 on these sets).
	if got := fit.ClassEntropy(p); math.Abs(got-r.Entropy) > 1e-4*max(1, math.Abs(r.Entropy)) {
		t.Errorf("k=%d: spherical GMM entropy from sklearn's start %.10g, sklearn %.10g", k, got, r.Entropy)
	}
}

// checkFullGMM compares the full-covariance mixture with scikit-learn's
// GaussianMixture(covariance_type="full", reg_covar=1e-6) (see make_reference.py).
func checkFullGMM(t *testing.T, p kmeans.Data, k int, r refK, fit kmeans.Result) {
	t.Helper()
	f := r.GMMFull
	if len(f.Covs) != k*p.D*p.D {
		t.Fatalf("k=%d: reference has %d full-covariance values, want %d", k, len(f.Covs), k*p.D*p.D)
	}
	// score_samples(X).sum() of sklearn's fitted parameters: our log-likelihood to 1e-9 relative.
	g := criteria.GMMFull{K: k, D: p.D, Weights: f.Weights, Means: f.Means, Covs: f.Covs}
	got, err := g.LogLik(p, nil)
	if err != nil {
		t.Fatalf("k=%d: full GMM log-likelihood: %v", k, err)
	}
	if relErr(got, f.Loglik) > 1e-9 {
		t.Errorf("k=%d: full GMM log-likelihood %.12g, sklearn %.12g", k, got, f.Loglik)
	}
	// The entropy of predict_proba(X) at sklearn's parameters, the term ICL adds to BIC
	// (Biernacki, Celeux & Govaert 2000): to 1e-9 relative, or 1e-9 absolute when the
	// components barely overlap (the entropy is then a sum of tiny terms).
	en, err := g.ClassEntropy(p)
	if err != nil {
		t.Fatalf("k=%d: full GMM entropy: %v", k, err)
	}
	if math.Abs(en-f.Entropy) > 1e-9*max(1, math.Abs(f.Entropy)) {
		t.Errorf("k=%d: full GMM classification entropy %.12g, sklearn %.12g", k, en, f.Entropy)
	}
	np := criteria.GMMFullParams(k, p.D)
	n := float64(p.Len())
	// The parameter count matches sklearn's (BIC - AIC = p (ln n - 2)).
	if pd := (f.BIC - f.AIC) / (math.Log(n) - 2); math.Abs(pd-float64(np)) > 1e-6*float64(np) {
		t.Errorf("k=%d: sklearn's full parameter count %.6f, GMMFullParams %d", k, pd, np)
	}
	// bic / aic from the same EM start (the KMeans labels): the same EM, stopped at 1e-10 per
	// point, so to 1e-6 relative.
	_, ll, _, err := criteria.GMMFullFit(p, fromLabels(p, r.Labels, k), criteria.GMMOptions{MaxIter: 5000, Tol: 1e-10, Reg: 1e-6})
	if err != nil {
		t.Fatalf("k=%d: GMMFullFit: %v", k, err)
	}
	if got := criteria.BIC(ll, np, n); relErr(got, f.BIC) > 1e-6 {
		t.Errorf("k=%d: full GMM BIC from sklearn's start %.10g, sklearn %.10g", k, got, f.BIC)
	}
	if got := criteria.AIC(ll, np); relErr(got, f.AIC) > 1e-6 {
		t.Errorf("k=%d: full GMM AIC from sklearn's start %.10g, sklearn %.10g", k, got, f.AIC)
	}
	// From our own k-means fit with the EM settings of Evaluate, at most 2% (of |BIC|) worse.
	_, ll2, _, err := criteria.GMMFullFit(p, fit, criteria.GMMOptions{Reg: 1e-6})
	if err != nil {
		t.Fatalf("k=%d: GMMFullFit from our fit: %v", k, err)
	}
	if got := criteria.BIC(ll2, np, n); got > f.BIC+0.02*math.Abs(f.BIC) {
		t.Errorf("k=%d: full GMM BIC from our k-means fit %.8g, sklearn %.8g (> 2%% worse)", k, got, f.BIC)
	}
}

func TestReferenceCommitted(t *testing.T) {
	checkReference(t, readReference(t, filepath.Join(refDir, "reference.json")))
}

// TestReferenceLive re-runs make_reference.py into a temporary directory and compares with the
// live scikit-learn / SciPy values (KGAUGE_LIVE_REFERENCE=1 and a python3 with sklearn needed).
func TestReferenceLive(t *testing.T) {
	if os.Getenv("KGAUGE_LIVE_REFERENCE") != "1" {
		t.Skip("set KGAUGE_LIVE_REFERENCE=1 to recompute the reference values with scikit-learn")
	}
	py := ""
	for _, c := range []string{"python3", "/usr/bin/python3"} {
		if err := exec.Command(c, "-c", "import sklearn, scipy").Run(); err == nil {
			py = c
			break
		}
	}
	if py == "" {
		t.Skip("no python3 with sklearn and scipy (apt-get install -y python3-sklearn python3-scipy)")
	}
	dir := t.TempDir()
	cmd := exec.Command(py, filepath.Join(refDir, "make_reference.py"), "--out", dir)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("make_reference.py: %v\n%s", err, out)
	}
	checkReference(t, readReference(t, filepath.Join(dir, "reference.json")))
}

// fromLabels turns labels into a kmeans.Result with the cluster means as centres.
func fromLabels(p kmeans.Data, labels []int32, k int) kmeans.Result {
	r := kmeans.Result{K: k, Centres: make([]float64, k*p.D), Labels: labels, Sizes: make([]float64, k)}
	for i, l := range labels {
		for t, v := range p.Point(i) {
			r.Centres[int(l)*p.D+t] += v
		}
		r.Sizes[l]++
	}
	for j := 0; j < k; j++ {
		for t := 0; t < p.D; t++ {
			r.Centres[j*p.D+t] /= r.Sizes[j]
		}
	}
	return r
}
