package criteria

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distmv"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// TestStudentTLogProb checks StudentT's density against gonum's distmv.StudentsT (a
// general-purpose reference library) at points near and far from the centre.
func TestStudentTLogProb(t *testing.T) {
	mean := []float64{1, -2, 0.5}
	scale := []float64{2, 0.3, -0.2, 0.3, 1, 0.1, -0.2, 0.1, 0.5}
	for _, nu := range []float64{1, 3, 30} {
		ref, ok := distmv.NewStudentsT(mean, mat.NewSymDense(3, append([]float64(nil), scale...)), nu, nil)
		if !ok {
			t.Fatal("gonum rejected the scale matrix")
		}
		st := StudentT{D: 3, Mean: mean, Scale: scale, Nu: nu}
		for _, x := range [][]float64{{1, -2, 0.5}, {0, 0, 0}, {8, 3, -4}} {
			got, err := st.LogProb(x)
			if err != nil {
				t.Fatal(err)
			}
			if want := ref.LogProb(x); math.Abs(got-want) > 1e-10*math.Max(1, math.Abs(want)) {
				t.Errorf("nu=%g x=%v: LogProb %.12g, gonum %.12g", nu, x, got, want)
			}
		}
	}
}

// TestStudentTFitRecovers is a property test on invented data drawn by gonum's distmv.StudentsT:
// the fit finds the degrees of freedom, location and scale it was drawn with, and on Gaussian
// data a large ν.
func TestStudentTFitRecovers(t *testing.T) {
	mean := []float64{1, -2, 0.5}
	scale := []float64{2, 0.3, -0.2, 0.3, 1, 0.1, -0.2, 0.1, 0.5}
	for _, tc := range []struct {
		nu     float64
		lo, hi float64 // accepted range of the fitted ν
	}{{3, 2.6, 3.5}, {8, 6, 11}} {
		ref, _ := distmv.NewStudentsT(mean, mat.NewSymDense(3, append([]float64(nil), scale...)), tc.nu, rand.NewPCG(7, 1))
		n := 20000
		x := make([]float64, 0, n*3)
		for range n {
			x = append(x, ref.Rand(nil)...)
		}
		fit, ll, _, err := StudentTFit(kmeans.Data{X: x, D: 3}, GMMOptions{MaxIter: 200, Tol: 1e-8})
		if err != nil {
			t.Fatal(err)
		}
		if fit.Nu < tc.lo || fit.Nu > tc.hi {
			t.Errorf("nu %g: fitted %.3f, want within [%g, %g]", tc.nu, fit.Nu, tc.lo, tc.hi)
		}
		for a := range mean {
			if math.Abs(fit.Mean[a]-mean[a]) > 0.05 {
				t.Errorf("nu %g: mean %v, want %v", tc.nu, fit.Mean, mean)
			}
		}
		for i := range scale {
			if math.Abs(fit.Scale[i]-scale[i]) > 0.05 {
				t.Errorf("nu %g: scale %v, want %v", tc.nu, fit.Scale, scale)
				break
			}
		}
		// The fitted log-likelihood is the sum of LogProb at the fit.
		sum := 0.0
		for i := range n {
			v, _ := fit.LogProb(x[i*3 : i*3+3])
			sum += v
		}
		if math.Abs(sum-ll) > 1e-8*math.Abs(ll) {
			t.Errorf("nu %g: log-likelihood %.10g, sum of LogProb %.10g", tc.nu, ll, sum)
		}
	}
	r := rand.New(rand.NewPCG(5, 1))
	g := make([]float64, 20000*3)
	for i := range g {
		g[i] = r.NormFloat64()
	}
	fit, _, _, err := StudentTFit(kmeans.Data{X: g, D: 3}, GMMOptions{MaxIter: 200, Tol: 1e-8})
	if err != nil {
		t.Fatal(err)
	}
	if fit.Nu < 40 {
		t.Errorf("Gaussian data: fitted nu %.2f, want a large one (>= 40)", fit.Nu)
	}
}

// TestHeavyTailsOneGroup: bic_gmm calls a heavy-tailed single cloud one group (its components
// only imitate the tails) and keeps its k on separated clusters. Property test on invented data:
// 3,000 rows of a 5-dimensional Student t with 3 degrees of freedom (drawn by gonum's
// distmv.StudentsT), and four Gaussian clusters centred 7 standard deviations out along four axes.
func TestHeavyTailsOneGroup(t *testing.T) {
	ref, _ := distmv.NewStudentsT(make([]float64, 5), mat.NewDiagDense(5, []float64{1, 1, 1, 1, 1}), 3, rand.NewPCG(11, 1))
	cloud := make([]float64, 0, 3000*5)
	for range 3000 {
		cloud = append(cloud, ref.Rand(nil)...)
	}
	r := rand.New(rand.NewPCG(11, 2))
	four := make([]float64, 3000*5)
	for i := range 3000 {
		for j := range 5 {
			four[i*5+j] = r.NormFloat64()
		}
		four[i*5+i%4] += 7 // cluster i%4 centred 7 sd out along its own axis
	}
	for _, tc := range []struct {
		name  string
		p     kmeans.Data
		want  int
		heavy bool
	}{
		{"Student t cloud", kmeans.Data{X: cloud, D: 5}, 1, true},
		{"four clusters", kmeans.Data{X: four, D: 5}, 4, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			opt := DefaultOptions()
			opt.MaxK, opt.Seed = 8, 1
			res, err := Evaluate(t.Context(), ExactSummary(tc.p), opt)
			if err != nil {
				t.Fatal(err)
			}
			var v Vote
			for _, x := range res.Votes {
				if x.Criterion == NameBICGMM {
					v = x
				}
			}
			heavy := strings.Contains(v.Note, "heavy-tailed")
			if v.K != tc.want || heavy != tc.heavy {
				t.Errorf("bic_gmm votes %d (%s); want %d, heavy-tailed note %v", v.K, v.Note, tc.want, tc.heavy)
			}
			if tc.heavy && !(res.PerK[0].BICStudentT < res.PerK[0].BICGMM) {
				t.Errorf("Student t BIC %.6g not below the Gaussian's %.6g at k = 1", res.PerK[0].BICStudentT, res.PerK[0].BICGMM)
			}
		})
	}
}
