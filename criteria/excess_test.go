package criteria_test

import (
	"context"
	"encoding/json"
	"math"
	"reflect"
	"testing"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

// TestLikelihoodCriteriaOnAWeightedSubsample: a coreset is a weighted subsample, and a model fitted
// to it scores better on it than on the rows it stands for. Scaled to a large row count that
// optimism outgrows BIC's penalty, and without the correction for it (fitExcess) bic_gmm, aic_gmm
// and bic_kmeans keep improving up to max-k. Here 2,000 points of four well-separated spherical
// clusters (invented data, a property test) stand for 2 million rows (weight 1,000 each): every
// likelihood criterion must still name the four clusters, as it does on the points themselves.
func TestLikelihoodCriteriaOnAWeightedSubsample(t *testing.T) {
	p := mixture(21, 2000, 3, 4, 10)
	w := make([]float64, p.Len())
	for i := range w {
		w[i] = 1000
	}
	opt := criteria.DefaultOptions()
	opt.MaxK, opt.GapRefs, opt.Anchors = 10, 2, 200
	for _, tc := range []struct {
		name string
		pts  kmeans.Data
	}{
		{"points themselves", p},
		{"2 million rows", kmeans.Data{X: p.X, W: w, D: p.D}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			res, err := criteria.Evaluate(context.Background(), criteria.ExactSummary(tc.pts), opt)
			if err != nil {
				t.Fatal(err)
			}
			for _, v := range res.Votes {
				switch v.Criterion {
				case criteria.NameBICGMM, criteria.NameAICGMM, criteria.NameBICKMeans:
					if v.Abstain || v.K != 4 {
						t.Errorf("%s votes %d (abstain %v, %s), want 4", v.Criterion, v.K, v.Abstain, v.Note)
					}
				}
			}
		})
	}
}

// TestVotesOfStoredScores: the per-k scores of a result, written as JSON and read back (null as
// NaN), give the votes Evaluate cast, so a stored grid can be voted again under a changed rule.
func TestVotesOfStoredScores(t *testing.T) {
	opt := criteria.DefaultOptions()
	opt.MaxK, opt.GapRefs, opt.Anchors = 9, 2, 200
	res, err := criteria.Evaluate(context.Background(), criteria.ExactSummary(mixture(5, 900, 2, 3, 6)), opt)
	if err != nil {
		t.Fatal(err)
	}
	b, err := json.Marshal(res.PerK)
	if err != nil {
		t.Fatal(err)
	}
	var back []criteria.Scores
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	if !math.IsNaN(back[0].Silhouette) {
		t.Errorf("k = 1 silhouette read back as %v, want NaN", back[0].Silhouette)
	}
	wardK := 0
	for _, v := range res.Votes {
		if v.Criterion == criteria.NameWard && !v.Abstain {
			wardK = v.K
		}
	}
	got := criteria.VotesOf(back, wardK, 900, 900, 2, opt)
	if !reflect.DeepEqual(got, res.Votes) {
		t.Errorf("votes from stored scores differ:\n got %+v\nwant %+v", got, res.Votes)
	}
}
