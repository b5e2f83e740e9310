package criteria_test

import (
	"context"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

// The five simulation scenarios of Tibshirani, Walther & Hastie (2001), "Estimating the number of
// clusters in a data set via the gap statistic", JRSS-B 63(2):411-423, section 6 (parameters as
// summarised in the developers' methods notes (METHODS.md, kept beside the repository) §1.3, from memory of the paper plus a public replication):
//
//	(a) null: 200 points uniform on the unit cube in 10 dimensions (true k = 1);
//	(b) 3 clusters in 2 dims: 25, 25, 50 standard-normal points at (0,0), (0,5), (5,-3);
//	(c) 4 clusters in 3 dims: each 25 or 50 standard-normal points (fair coin), centres N(0, 5 I);
//	(d) 4 clusters in 10 dims: as (c) with centres N(0, 1.9 I);
//	(e) 2 elongated clusters in 3 dims: x1 = x2 = x3 = t, t 100 equally spaced values in
//	    [-0.5, 0.5], plus N(0, 0.1^2) noise on each feature; cluster 2 the same + 10 on each feature.
//
// Discard rule of (c) and (d), our reading: a realization is redrawn when some pair of points from
// different clusters is less than 1.0 apart ("minimum distance between points"; the alternative
// reading, distance between centres, is not used).
func scenario(name byte, rng *rand.Rand) (kmeans.Data, int) {
	var x []float64
	var lab []int
	gauss := func(c []float64, n, j int) {
		for i := 0; i < n; i++ {
			for _, m := range c {
				x = append(x, m+rng.NormFloat64())
			}
			lab = append(lab, j)
		}
	}
	switch name {
	case 'a':
		for i := 0; i < 200*10; i++ {
			x = append(x, rng.Float64())
		}
		return kmeans.Data{X: x, D: 10}, 1
	case 'b':
		gauss([]float64{0, 0}, 25, 0)
		gauss([]float64{0, 5}, 25, 1)
		gauss([]float64{5, -3}, 50, 2)
		return kmeans.Data{X: x, D: 2}, 3
	case 'c', 'd':
		d, v := 3, 5.0
		if name == 'd' {
			d, v = 10, 1.9
		}
		for {
			x, lab = x[:0], lab[:0]
			for j := 0; j < 4; j++ {
				c := make([]float64, d)
				for t := range c {
					c[t] = math.Sqrt(v) * rng.NormFloat64()
				}
				n := 25
				if rng.IntN(2) == 1 {
					n = 50
				}
				gauss(c, n, j)
			}
			ok := true
			n := len(lab)
			for i := 0; i < n && ok; i++ {
				for j := i + 1; j < n; j++ {
					if lab[i] != lab[j] && kmeans.Dist2(x[i*d:(i+1)*d], x[j*d:(j+1)*d]) < 1 {
						ok = false
						break
					}
				}
			}
			if ok {
				return kmeans.Data{X: append([]float64(nil), x...), D: d}, 4
			}
		}
	case 'e':
		for c := 0; c < 2; c++ {
			for i := 0; i < 100; i++ {
				t := -0.5 + float64(i)/99
				for j := 0; j < 3; j++ {
					x = append(x, t+0.1*rng.NormFloat64()+10*float64(c))
				}
			}
		}
		return kmeans.Data{X: x, D: 3}, 2
	}
	panic("unknown scenario")
}

func TestGapTibshiraniScenarios(t *testing.T) {
	if testing.Short() {
		t.Skip("simulation study")
	}
	const reps = 50 // as in the paper
	// Lower (and for (e) upper) bounds on how many of the 50 realizations find the true k. The
	// paper's pattern (from memory; its Table 1 was not available): the gap statistic with the
	// uniform reference solves the null and the 3- and 4-cluster scenarios in most realizations
	// and fails the elongated scenario (e), which the principal-component reference solves.
	tests := []struct {
		name           byte
		boxMin, boxMax int
		pcaMin         int
		verdictMin     int
	}{
		// "Most" is read as at least 60% (30 of 50); the PC box in the 4-cluster scenarios only
		// has to reach 50%; in (e) the uniform box may succeed in at most a quarter.
		// verdictMin is issue 12's 48 of 50 in every scenario (DEVELOPERS.md, issue 12, eleventh
		// round: 50, 50, 50, 49, 50 with max-k 6).
		{'a', 30, reps, 30, 48},
		{'b', 30, reps, 30, 48},
		{'c', 30, reps, 25, 48},
		{'d', 30, reps, 25, 48},
		{'e', 0, reps / 4, 40, 48},
	}
	for _, tc := range tests {
		t.Run(string(tc.name), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(2001, uint64(tc.name)))
			box, pca, verdict := 0, 0, 0
			for r := 0; r < reps; r++ {
				p, want := scenario(tc.name, rng)
				opt := criteria.DefaultOptions()
				opt.MaxK = 6
				opt.Seed = uint64(r + 1)
				res, err := criteria.Evaluate(context.Background(), criteria.ExactSummary(p), opt)
				if err != nil {
					t.Fatal(err)
				}
				for _, v := range res.Votes {
					switch {
					case v.Criterion == criteria.NameGapBox && !v.Abstain && v.K == want:
						box++
					case v.Criterion == criteria.NameGapPCA && !v.Abstain && v.K == want:
						pca++
					}
				}
				if res.Verdict.K == want {
					verdict++
				}
			}
			t.Logf("scenario (%c): true k found by gap_box %d/%d, gap_pca %d/%d, verdict %d/%d",
				tc.name, box, reps, pca, reps, verdict, reps)
			if box < tc.boxMin || box > tc.boxMax {
				t.Errorf("(%c): gap_box found the true k %d/%d times, want %d..%d", tc.name, box, reps, tc.boxMin, tc.boxMax)
			}
			if verdict < tc.verdictMin {
				t.Errorf("(%c): the verdict found the true k %d/%d times, want >= %d", tc.name, verdict, reps, tc.verdictMin)
			}
			if pca < tc.pcaMin {
				t.Errorf("(%c): gap_pca found the true k %d/%d times, want >= %d", tc.name, pca, reps, tc.pcaMin)
			}
		})
	}
}

// TestMixtureLadderOnThinRows: on scenario (d)'s shape (100 to 200 rows in 10 dimensions) no
// full-covariance mixture beyond k = 1 has two rows per parameter, so Evaluate fits the spherical
// one too and scores each k by the lower BIC (criteria.MixtureFamily); every k from 2 to max-k 6
// then has mixture scores (a spherical 6-component mixture has 71 parameters), and bic_gmm votes.
// On the first realization it names the true 4, as `gap_box` does.
func TestMixtureLadderOnThinRows(t *testing.T) {
	rng := rand.New(rand.NewPCG(2001, uint64('d')))
	p, want := scenario('d', rng)
	opt := criteria.DefaultOptions()
	opt.MaxK = 6
	res, err := criteria.Evaluate(context.Background(), criteria.ExactSummary(p), opt)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range res.PerK[1:] {
		if s.MixtureFamily != criteria.FamilySpherical || math.IsNaN(s.BICGMM) {
			t.Errorf("k=%d: mixture family %q, BIC %v; want a spherical fit", s.K, s.MixtureFamily, s.BICGMM)
		}
	}
	for _, v := range res.Votes {
		if v.Criterion == criteria.NameBICGMM && (v.Abstain || v.K != want || !strings.Contains(v.Note, "spherical")) {
			t.Errorf("bic_gmm vote %+v, want k = %d from the spherical mixture", v, want)
		}
	}
}
