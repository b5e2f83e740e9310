package criteria

import (
	"errors"
	"math"

	"github.com/kgauge/kgauge/internal/lanes"
)

// GMM is a Gaussian mixture with diagonal covariances (or spherical ones: GMMOptions.Spherical).
// Evaluate fits the full-covariance GMMFull, and the spherical model as well where the points are
// too few for a well-determined full covariance at max-k (mixtureLadder); the diagonal model is
// kept for the accuracy benchmarks (bench/) and its reference checks.
type GMM struct {
	K, D    int
	Weights []float64 // K mixing proportions
	Means   []float64 // K*D
	Vars    []float64 // K*D variances
}

// GMMParams returns the number of free parameters of a K-component diagonal mixture in D
// dimensions: (K - 1) + 2 K D (weights, means, variances).
func GMMParams(k, d int) int { return (k - 1) + 2*k*d }

// GMMSphericalParams returns the number of free parameters of a K-component spherical mixture in D
// dimensions (one variance per component): (K - 1) + K D + K.
func GMMSphericalParams(k, d int) int { return (k - 1) + k*d + k }

// GMMOptions controls GMMFit. Zero values mean defaults.
type GMMOptions struct {
	MaxIter int     // default 100
	Tol     float64 // stop when the mean log-likelihood per unit weight changes by <= Tol; default 1e-4
	Reg     float64 // added to every variance after each M step (variance floor); default 1e-6
	// Spherical makes GMMFit fit one variance per component, the mean of its per-dimension
	// variances (the maximum-likelihood spherical variance), stored in every dimension of Vars.
	Spherical bool
	// resp, when not nil, is reused for the responsibilities (grown when short), so a caller that
	// fits one mixture after another holds one n×k buffer instead of leaving one per fit to the
	// collector (Evaluate's mixture jobs, each on a buffer of its own).
	resp *[]float64
	// stop, when not nil, is asked before each EM iteration; once it reports true the fit ends
	// with errEMStopped (Evaluate's mixture jobs above a k where the mixtures are settled).
	stop func() bool
}

// errEMStopped is the error of an EM that GMMOptions.stop ended.
var errEMStopped = errors.New("criteria: EM stopped")

// withDefaults replaces GMMOptions' unset bounds by their defaults (MaxIter 100, Tol 1e-4, Reg
// 1e-6).
func (o GMMOptions) withDefaults() GMMOptions {
	if o.MaxIter <= 0 {
		o.MaxIter = 100
	}
	if o.Tol <= 0 {
		o.Tol = 1e-4
	}
	if o.Reg <= 0 {
		o.Reg = 1e-6
	}
	return o
}

// respBuffer returns a slice of n values for the responsibilities: opt.resp's, grown as needed,
// or a new one.
func (o GMMOptions) respBuffer(n int) []float64 {
	if o.resp == nil {
		return make([]float64, n)
	}
	if cap(*o.resp) < n {
		*o.resp = make([]float64, n)
	}
	return (*o.resp)[:n]
}

// LogLik returns the weighted log-likelihood sum_i w_i ln sum_j pi_j N(x_i | mu_j, diag(var_j)),
// computed with the log-sum-exp trick. resp, if not nil (len n*K), receives the responsibilities.
func (g GMM) LogLik(p Points, resp []float64) float64 {
	k, d := g.K, g.D
	logc := make([]float64, k) // ln pi_j - 0.5 sum_t ln(2 pi var_jt)
	inv := make([]float64, k*d)
	for j := 0; j < k; j++ {
		c := math.Log(g.Weights[j])
		for t := 0; t < d; t++ {
			v := g.Vars[j*d+t]
			c -= 0.5 * math.Log(2*math.Pi*v)
			inv[j*d+t] = 0.5 / v
		}
		logc[j] = c
	}
	// The components in groups of four for lanes.ScaledDists, transposed; the last group filled
	// up with copies of the last component, whose sums are measured and not read.
	groups := (k + 3) / 4
	means, scales := make([]float64, 4*groups*d), make([]float64, 4*groups*d)
	copy(means, g.Means[:k*d])
	copy(scales, inv)
	for j := k; j < 4*groups; j++ {
		copy(means[j*d:(j+1)*d], g.Means[(k-1)*d:k*d])
		copy(scales[j*d:(j+1)*d], inv[(k-1)*d:k*d])
	}
	ct, st := lanes.Group(nil, means, groups, d), lanes.Group(nil, scales, groups, d)
	q := make([]float64, 4*groups) // q[:k] are read
	lr := make([]float64, k)
	ll := 0.0
	for i := 0; i < p.Len(); i++ {
		x := p.Point(i)
		lanes.ScaledDists(x, ct, st, groups, q)
		mx := math.Inf(-1)
		for j := range lr {
			lr[j] = logc[j] - q[j]
			if lr[j] > mx {
				mx = lr[j]
			}
		}
		s := 0.0
		for j := 0; j < k; j++ {
			s += math.Exp(lr[j] - mx)
		}
		lse := mx + math.Log(s)
		ll += p.Weight(i) * lse
		if resp != nil {
			r := resp[i*k : i*k+k]
			for j := 0; j < k; j++ {
				r[j] = math.Exp(lr[j] - lse)
			}
		}
	}
	return ll
}

// ClassEntropy returns the weighted entropy of the mixture's soft classification of p,
// -sum_i w_i sum_j r_ij ln r_ij (the term ICL adds to BIC twice).
func (g GMM) ClassEntropy(p Points) float64 {
	resp := make([]float64, p.Len()*g.K)
	g.LogLik(p, resp)
	return classEntropy(p, resp, g.K)
}

// GMMFit fits a diagonal Gaussian mixture to the weighted points by EM (Dempster, Laird & Rubin
// 1977) started from a k-means solution: weights = cluster weight shares, means = the k-means
// centres, variances = weighted within-cluster variances per dimension, each + opt.Reg. Each M step
// uses weighted responsibilities w_i r_ij; a component whose weight falls below 1e-12 of the total
// keeps its previous mean and variances (with opt.Spherical, each component's variances are set to
// their mean after every M step). EM stops when the log-likelihood per unit weight changes by at
// most opt.Tol or at the opt.MaxIter-th E step. It returns the model, its weighted log-likelihood
// on p (of that model: the last E step's) and the number of EM iterations.
func GMMFit(p Points, init Fit, opt GMMOptions) (GMM, float64, int) {
	g, ll, _, iters := gmmFit(p, init, opt)
	return g, ll, iters
}

// sphericalVars replaces each of the k components' d variances by their mean, then adds reg.
func sphericalVars(vars []float64, k, d int, reg float64) {
	for j := 0; j < k; j++ {
		v := vars[j*d : j*d+d]
		m := 0.0
		for _, x := range v {
			m += x - reg
		}
		m = max(0, m/float64(d)) + reg
		for t := range v {
			v[t] = m
		}
	}
}

// gmmFit is GMMFit that also returns the weighted entropy of the classification (classEntropy)
// with the responsibilities of the returned log-likelihood's E step.
func gmmFit(p Points, init Fit, opt GMMOptions) (GMM, float64, float64, int) {
	opt = opt.withDefaults()
	d, k, n := p.D, init.K, p.Len()
	g := GMM{K: k, D: d, Weights: make([]float64, k), Means: append([]float64(nil), init.Centres...),
		Vars: make([]float64, k*d)}
	W := p.TotalWeight()
	// Initial parameters from the hard k-means labels.
	for i, l := range init.Labels {
		w := p.Weight(i)
		x := p.Point(i)
		for t, v := range x {
			e := v - g.Means[int(l)*d+t]
			g.Vars[int(l)*d+t] += w * e * e
		}
		g.Weights[l] += w
	}
	for j := 0; j < k; j++ {
		for t := 0; t < d; t++ {
			if g.Weights[j] > 0 {
				g.Vars[j*d+t] /= g.Weights[j]
			}
			g.Vars[j*d+t] += opt.Reg
		}
		g.Weights[j] /= W
	}
	if opt.Spherical {
		sphericalVars(g.Vars, k, d, opt.Reg)
	}
	resp := opt.respBuffer(n * k)
	nk := make([]float64, k)
	sums, sq := make([]float64, k*d), make([]float64, k*d)
	prev := math.Inf(-1)
	ll := 0.0
	iters := 0
	for it := 1; ; it++ {
		if opt.stop != nil && opt.stop() {
			return g, math.NaN(), math.NaN(), iters
		}
		ll = g.LogLik(p, resp)
		iters = it
		if math.Abs(ll-prev) <= opt.Tol*W || it == opt.MaxIter {
			break
		}
		prev = ll
		// M step, one pass: variances about the previous means m0, shifted afterwards,
		// var = E[(x - m0)^2] - (mu - m0)^2 (no cancellation since mu is close to m0).
		for j := range nk {
			nk[j] = 0
		}
		for i := range sums {
			sums[i], sq[i] = 0, 0
		}
		for i := 0; i < n; i++ {
			w := p.Weight(i)
			x := p.Point(i)
			r := resp[i*k : i*k+k]
			for j := 0; j < k; j++ {
				wr := w * r[j]
				if wr == 0 {
					continue
				}
				nk[j] += wr
				lanes.AddMoments(x, g.Means[j*d:j*d+d], sums[j*d:j*d+d], sq[j*d:j*d+d], wr)
			}
		}
		for j := 0; j < k; j++ {
			g.Weights[j] = nk[j] / W
			if nk[j] <= 1e-12*W {
				continue // keep the previous mean and variances
			}
			for t := 0; t < d; t++ {
				sh := sums[j*d+t] / nk[j]
				v := sq[j*d+t]/nk[j] - sh*sh
				if v < 0 {
					v = 0
				}
				g.Means[j*d+t] += sh
				g.Vars[j*d+t] = v + opt.Reg
			}
			if opt.Spherical {
				sphericalVars(g.Vars[j*d:j*d+d], 1, d, opt.Reg)
			}
		}
	}
	return g, ll, classEntropy(p, resp, k), iters
}

// BIC returns the Bayesian information criterion -2 ln L + p ln n (Schwarz 1978; lower is better).
func BIC(loglik float64, params int, n float64) float64 {
	return -2*loglik + float64(params)*math.Log(n)
}

// AIC returns the Akaike information criterion -2 ln L + 2 p (Akaike 1974; lower is better).
func AIC(loglik float64, params int) float64 { return -2*loglik + 2*float64(params) }

// AICc returns AIC with the small-sample correction of Hurvich & Tsai (1989, Biometrika 76:297-307),
// AIC + 2 p (p + 1) / (n - p - 1) for n rows (Burnham & Anderson 2002 advise it whenever n / p is
// below about 40; both from memory); +Inf when n <= p + 1. On large inputs it is AIC: the
// correction is about 2 p² / n. aic_gmm uses it (DEVELOPERS.md, issue 12, eleventh round): with few
// rows per parameter plain AIC runs on to larger k.
func AICc(loglik float64, params int, n float64) float64 {
	p := float64(params)
	if n <= p+1 {
		return math.Inf(1)
	}
	return AIC(loglik, params) + 2*p*(p+1)/(n-p-1)
}
