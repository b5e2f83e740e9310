package criteria

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/kgauge/kgauge/internal/kmeans"
)

func sorted(v []float64) []float64 { slices.Sort(v); return v }

func TestModeDipPValue(t *testing.T) {
	// Property tests with invented data: one-mode shapes must not be called split at the 1% level
	// in more than a few of 40 samples; two well-separated bumps must be called split every time.
	for _, tc := range []struct {
		name          string
		draw          func(r *rand.Rand) float64
		maxRejections int
		minRejections int
	}{
		{"normal", func(r *rand.Rand) float64 { return r.NormFloat64() }, 1, 0},
		{"log-normal", func(r *rand.Rand) float64 { return math.Exp(r.NormFloat64()) }, 1, 0},
		{"student-t(2)", func(r *rand.Rand) float64 {
			c := r.NormFloat64()*r.NormFloat64() + r.NormFloat64()*r.NormFloat64()
			return r.NormFloat64() / math.Sqrt(c/2)
		}, 1, 0},
		// The uniform is the least favourable one-mode shape: about 1% of samples by design.
		{"uniform", func(r *rand.Rand) float64 { return r.Float64() }, 3, 0},
		{"two bumps 4 sd apart", func(r *rand.Rand) float64 {
			return r.NormFloat64() + 4*float64(r.IntN(2))
		}, 40, 40},
		{"bumps 80:20, 5 sd apart", func(r *rand.Rand) float64 {
			if r.Float64() < 0.2 {
				return 5 + r.NormFloat64()
			}
			return r.NormFloat64()
		}, 40, 40},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(5, 6))
			rej := 0
			for range 40 {
				x := make([]float64, 800)
				for i := range x {
					x[i] = tc.draw(rng)
				}
				if ModeDipPValue(ModeDip(sorted(x)), len(x)) < modeCheckAlpha {
					rej++
				}
			}
			if rej > tc.maxRejections || rej < tc.minRejections {
				t.Errorf("%d of 40 samples called split, want %d..%d", rej, tc.minRejections, tc.maxRejections)
			}
		})
	}
}

func TestModeDipBounds(t *testing.T) {
	// The dip of any sample is at least 1/(2n) (a jump of F_n) and at most 1/4 (Hartigan &
	// Hartigan 1985, section 2); two equal point masses reach the maximum for large n.
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{5, 50, 500} {
		x := make([]float64, n)
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		d := ModeDip(sorted(x))
		if d < 1/(2*float64(n))-1e-12 || d > 0.25 {
			t.Errorf("n=%d: dip %v outside [1/(2n), 1/4]", n, d)
		}
	}
	x := make([]float64, 1000)
	for i := range x {
		x[i] = float64(i % 2)
		x[i] += 1e-9 * float64(i) // distinct values
	}
	if d := ModeDip(sorted(x)); d < 0.2 {
		t.Errorf("two point masses: dip %v, want close to 1/4", d)
	}
}

func TestModeCheckHalves(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	blob := func(sep float64) kmeans.Data {
		x := make([]float64, 0, 2000*3)
		for i := range 2000 {
			c := sep * float64(i%2)
			x = append(x, c+rng.NormFloat64(), 3*rng.NormFloat64(), rng.NormFloat64())
		}
		return kmeans.Data{X: x, D: 3}
	}
	one, ok := modeCheck(blob(0), rand.New(rand.NewPCG(1, 1)))
	if !ok || one.Modes || one.N != 1000 {
		t.Errorf("one elongated blob: %+v (ok %v), want one mode on halves of 1000", one, ok)
	}
	two, ok := modeCheck(blob(5), rand.New(rand.NewPCG(1, 1)))
	if !ok || !two.Modes {
		t.Errorf("two blobs 5 sd apart: %+v, want several modes", two)
	}
	if _, ok := modeCheck(kmeans.Data{X: make([]float64, 30), D: 1}, rng); ok {
		t.Error("30 points: checked, want too few")
	}
}

func TestPredictionStrength(t *testing.T) {
	// Hand-checked: test cluster 0 = {a,b,c} with training labels 0,0,1: pairs (a,b) agree out
	// of 3 pairs, 1/3; test cluster 1 = {d,e} with labels 1,1: 1. ps = min = 1/3.
	test := []int32{0, 0, 0, 1, 1}
	train := []int32{0, 0, 1, 1, 1}
	if got := PredictionStrength(test, train, 2); math.Abs(got-1.0/3) > 1e-12 {
		t.Errorf("ps = %v, want 1/3", got)
	}
	if got := PredictionStrength([]int32{0, 1, 1}, []int32{1, 0, 0}, 2); got != 1 {
		t.Errorf("relabelled agreement: ps = %v, want 1 (the singleton cluster is skipped)", got)
	}
}

func TestSplitAgreementSeparatesStableK(t *testing.T) {
	// Four well-separated Gaussian clusters: k = 2..4 stay above the threshold and k = 6 falls
	// below it (the paper's behaviour for well-separated clusters, Tibshirani & Walther 2005 §3).
	rng := rand.New(rand.NewPCG(8, 9))
	x := make([]float64, 0, 2000*2)
	cs := [][2]float64{{0, 0}, {10, 0}, {0, 10}, {10, 10}}
	for i := range 2000 {
		c := cs[i%4]
		x = append(x, c[0]+rng.NormFloat64(), c[1]+rng.NormFloat64())
	}
	a, b := splitHalves(kmeans.Data{X: x, D: 2}, rand.New(rand.NewPCG(1, 2)))
	for k, above := range map[int]bool{2: true, 4: true, 6: false} {
		ps := splitAgreement(a, b, k, 3, rand.New(rand.NewPCG(uint64(k), 3)))
		if (ps >= splitThreshold) != above {
			t.Errorf("k=%d: prediction strength %.3f, want above %.1f: %v", k, ps, splitThreshold, above)
		}
	}
}

func TestFarShare(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	n := 4000
	x := make([]float64, 0, n*2)
	for i := range n {
		v := []float64{rng.NormFloat64(), rng.NormFloat64()}
		if i%50 == 0 { // 2% of rows moved 30 sd out
			v[0] += 30
		}
		x = append(x, v...)
	}
	p := kmeans.Data{X: x, D: 2}
	labels := make([]int32, n)
	got := FarShare(p, labels, []float64{0, 0}, 1)
	if got < 0.019 || got > 0.025 {
		t.Errorf("far share %.4f, want about 0.02 (the moved rows, few others)", got)
	}
}

func TestWhitenGivesUnitCovariance(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 7))
	n, d := 5000, 3
	x := make([]float64, 0, n*d)
	for range n {
		z0, z1, z2 := rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()
		x = append(x, 3*z0, 2*z0+z1, z0-z1+0.5*z2)
	}
	p := kmeans.Data{X: x, D: d}
	cov := ExactSummary(p).Cov
	wp := whiten(p, cov)
	got := ExactSummary(wp).Cov
	for a := range d {
		for b := range d {
			want := 0.0
			if a == b {
				want = 1
			}
			if math.Abs(got[a*d+b]-want) > 1e-9 {
				t.Errorf("whitened covariance [%d,%d] = %v, want %v", a, b, got[a*d+b], want)
			}
		}
	}
}

// TestSplitVoteScales checks split_agreement's two scales: the whitened prediction strength decides
// one group or several, the unwhitened one then picks k (the whitened k when none qualifies).
func TestSplitVoteScales(t *testing.T) {
	per := func(white, plain []float64) []Scores {
		var out []Scores
		for i := range white {
			out = append(out, Scores{K: i + 1, Valid: true, SplitAgreement: white[i], SplitAgreementPlain: plain[i]})
		}
		return out
	}
	nan := math.NaN()
	for _, tc := range []struct {
		name         string
		white, plain []float64
		want         int
	}{
		{"whitened says one group", []float64{1, 0.5, 0.6, 0.4}, []float64{nan, 0.9, 0.95, 0.9}, 1},
		{"several; k from the plain halves", []float64{1, 0.9, 0.5, 0.4}, []float64{nan, 1, 0.6, 0.85}, 4},
		{"several; no plain k qualifies", []float64{1, 0.5, 0.85, 0.4}, []float64{nan, 0.5, 0.6, 0.7}, 3},
	} {
		if got, ok := splitVote(per(tc.white, tc.plain)); !ok || got != tc.want {
			t.Errorf("%s: splitVote = %d, %v; want %d", tc.name, got, ok, tc.want)
		}
	}
}
