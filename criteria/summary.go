package criteria

import (
	"math"
)

// Summary is what the criteria need from the one-pass sketch. All values live in the same
// (scaled) feature space.
type Summary struct {
	D        int
	N        float64           // exact number of rows summarised
	Mean     []float64         // exact column means
	Cov      []float64         // D*D covariance, divisor N
	Min, Max []float64         // exact bounding box
	Coreset  Points            // weighted coreset, weights sum to about N
	Sample   Points            // uniform reservoir sample, W nil
	Seeds    map[int][]float64 // optional centres per k from the pass's mini-batch k-means (k*D each)
}

// ExactSummary returns the Summary of an in-memory point set: exact moments and box, the points
// themselves (with their weights) as the coreset and, unweighted, as the sample. N is the total
// weight. It is meant for tests and small inputs; weights of the sample are dropped.
func ExactSummary(p Points) Summary {
	d, n := p.D, p.Len()
	s := Summary{D: d, Mean: make([]float64, d), Cov: make([]float64, d*d),
		Min: make([]float64, d), Max: make([]float64, d), Coreset: p,
		Sample: Points{X: p.X, D: d}}
	for j := 0; j < d; j++ {
		s.Min[j], s.Max[j] = math.Inf(1), math.Inf(-1)
	}
	tw := 0.0
	for i := 0; i < n; i++ {
		w := p.Weight(i)
		tw += w
		x := p.Point(i)
		for j, v := range x {
			s.Mean[j] += w * v
			s.Min[j] = math.Min(s.Min[j], v)
			s.Max[j] = math.Max(s.Max[j], v)
		}
	}
	s.N = tw
	if tw > 0 {
		for j := range s.Mean {
			s.Mean[j] /= tw
		}
		for i := 0; i < n; i++ {
			w := p.Weight(i)
			x := p.Point(i)
			for a := 0; a < d; a++ {
				da := x[a] - s.Mean[a]
				for b := a; b < d; b++ {
					s.Cov[a*d+b] += w * da * (x[b] - s.Mean[b])
				}
			}
		}
		for a := 0; a < d; a++ {
			for b := a; b < d; b++ {
				s.Cov[a*d+b] /= tw
				s.Cov[b*d+a] = s.Cov[a*d+b]
			}
		}
	}
	return s
}

func (s Summary) validate() error {
	if s.D <= 0 {
		return errf("summary has dimension %d", s.D)
	}
	if len(s.Mean) != s.D || len(s.Min) != s.D || len(s.Max) != s.D || len(s.Cov) != s.D*s.D {
		return errf("summary moments do not match dimension %d (mean %d, min %d, max %d, cov %d)",
			s.D, len(s.Mean), len(s.Min), len(s.Max), len(s.Cov))
	}
	if s.Coreset.D != s.D || s.Coreset.Len() == 0 || len(s.Coreset.X)%s.D != 0 {
		return errf("summary coreset is empty or has dimension %d, want %d", s.Coreset.D, s.D)
	}
	if s.Coreset.W != nil && len(s.Coreset.W) != s.Coreset.Len() {
		return errf("summary coreset has %d weights for %d points", len(s.Coreset.W), s.Coreset.Len())
	}
	if s.Sample.Len() > 0 && (s.Sample.D != s.D || len(s.Sample.X)%s.D != 0) {
		return errf("summary sample has dimension %d, want %d", s.Sample.D, s.D)
	}
	for _, v := range s.Coreset.X {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return errf("summary coreset holds a non-finite value")
		}
	}
	for i := 0; i < s.Coreset.Len(); i++ {
		if w := s.Coreset.Weight(i); !(w >= 0) || math.IsInf(w, 0) {
			return errf("summary coreset weight %d is %v", i, w)
		}
	}
	if !(s.N > 0) {
		return errf("summary has N = %v rows", s.N)
	}
	return nil
}
