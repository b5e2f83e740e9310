package criteria

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mathext"
)

// StudentT is one multivariate Student t distribution in D dimensions: location Mean, scale
// matrix Scale (D×D, row-major, symmetric; the covariance is Scale·Nu/(Nu−2) for Nu > 2) and Nu
// degrees of freedom. It is the heavy-tailed single group bic_gmm weighs against the Gaussian
// mixtures: a Student t is a continuous scale mixture of Gaussians with one centre, which a
// Gaussian mixture can only imitate with several components (McLachlan & Peel 2000, Finite
// Mixture Models, ch. 7).
type StudentT struct {
	D     int
	Mean  []float64
	Scale []float64
	Nu    float64
}

// StudentTParams returns the free parameters of one D-dimensional Student t: D + D(D+1)/2 + 1
// (location, scale matrix, degrees of freedom).
func StudentTParams(d int) int { return d + d*(d+1)/2 + 1 }

// The degrees of freedom StudentTFit may choose: below 1 the mean does not exist; above 200 the
// t is a Gaussian to within the fit's resolution.
const (
	studentNuMin = 1
	studentNuMax = 200
)

// LogProb returns ln f(x) of t at x.
func (t StudentT) LogProb(x []float64) (float64, error) {
	comp, err := t.prepare(0)
	if err != nil {
		return 0, err
	}
	z := make([]float64, t.D)
	return t.logProb(comp, comp.mahalanobis(x, t.Mean, z)), nil
}

// prepare factors the scale matrix (with reg on its diagonal if it is not positive definite, as
// GMMFull.prepare does).
func (t StudentT) prepare(reg float64) (fullComp, error) {
	comps, err := GMMFull{K: 1, D: t.D, Weights: []float64{1}, Means: t.Mean, Covs: t.Scale}.prepare(reg)
	if err != nil {
		return fullComp{}, err
	}
	return comps[0], nil
}

// logProb is ln f at Mahalanobis distance delta under the factored scale matrix c:
// ln Γ((ν+D)/2) − ln Γ(ν/2) − (D/2) ln(νπ) − ½ ln|Σ| − ((ν+D)/2) ln(1 + δ/ν).
func (t StudentT) logProb(c fullComp, delta float64) float64 {
	nu, d := t.Nu, float64(t.D)
	a, _ := math.Lgamma((nu + d) / 2)
	b, _ := math.Lgamma(nu / 2)
	halfLogDet := -(c.logc + 0.5*d*math.Log(2*math.Pi)) // logc = −(D/2) ln 2π − ½ ln|Σ| for weight 1
	return a - b - 0.5*d*math.Log(nu*math.Pi) - halfLogDet - 0.5*(nu+d)*math.Log1p(delta/nu)
}

// StudentTFit fits one multivariate Student t to the weighted points by ECME (Liu & Rubin 1995):
// the E step weighs each point by u = (ν + D)/(ν + δ), δ its Mahalanobis distance; the location
// and scale are the u-weighted mean and scatter (opt.Reg added to the scale's diagonal, as the
// mixtures' covariances get it); ν solves the conditional likelihood equation
// ln(ν/2) − ψ(ν/2) = −[1 + mean(ln u − u) + ψ((ν_old + D)/2) − ln((ν_old + D)/2)] (McLachlan &
// Peel 2000, ch. 7, from memory; ψ the digamma function, gonum's mathext.Digamma), by bisection within
// [studentNuMin, studentNuMax]. It starts from the weighted mean and covariance with ν = 10 and
// stops when the weighted log-likelihood changes by <= opt.Tol per unit weight or after
// opt.MaxIter iterations. It returns the fit, its weighted log-likelihood and the iterations run.
func StudentTFit(p Points, opt GMMOptions) (StudentT, float64, int, error) {
	n, d := p.Len(), p.D
	if opt.MaxIter <= 0 {
		opt.MaxIter = 100
	}
	if opt.Tol <= 0 {
		opt.Tol = 1e-4
	}
	t := StudentT{D: d, Mean: make([]float64, d), Scale: make([]float64, d*d), Nu: 10}
	u := make([]float64, n)
	for i := range u {
		u[i] = 1
	}
	W := 0.0
	for i := range n {
		W += p.Weight(i)
	}
	if !(W > 0) {
		return t, math.NaN(), 0, errors.New("criteria: Student t fit on points of no weight")
	}
	mStepT(p, u, W, opt.Reg, &t)
	delta := make([]float64, n)
	z := make([]float64, d)
	estep := func() (float64, error) {
		c, err := t.prepare(opt.Reg)
		if err != nil {
			return 0, err
		}
		ll := 0.0
		for i := range n {
			delta[i] = c.mahalanobis(p.Point(i), t.Mean, z)
			ll += p.Weight(i) * t.logProb(c, delta[i])
		}
		return ll, nil
	}
	ll, err := estep()
	if err != nil {
		return t, math.NaN(), 0, err
	}
	it := 0
	for it < opt.MaxIter {
		it++
		dd := float64(d)
		mean := 0.0
		for i := range n {
			u[i] = (t.Nu + dd) / (t.Nu + delta[i])
			mean += p.Weight(i) * (math.Log(u[i]) - u[i])
		}
		target := -(1 + mean/W + mathext.Digamma((t.Nu+dd)/2) - math.Log((t.Nu+dd)/2))
		t.Nu = solveNu(target)
		mStepT(p, u, W, opt.Reg, &t)
		next, err := estep()
		if err != nil {
			return t, math.NaN(), it, err
		}
		done := math.Abs(next-ll) <= opt.Tol*W
		ll = next
		if done {
			break
		}
	}
	return t, ll, it, nil
}

// solveNu returns the ν in [studentNuMin, studentNuMax] with ln(ν/2) − ψ(ν/2) = target (the left
// side falls from +∞ to 0 as ν grows), by bisection on ln ν; the nearer bound when none does.
func solveNu(target float64) float64 {
	h := func(nu float64) float64 { return math.Log(nu/2) - mathext.Digamma(nu/2) }
	switch {
	case !(target > h(studentNuMax)):
		return studentNuMax
	case !(target < h(studentNuMin)):
		return studentNuMin
	}
	lo, hi := math.Log(studentNuMin), math.Log(studentNuMax)
	for range 60 {
		mid := (lo + hi) / 2
		if h(math.Exp(mid)) > target {
			lo = mid
		} else {
			hi = mid
		}
	}
	return math.Exp((lo + hi) / 2)
}

// mStepT sets t's location to the u-weighted mean of the points and its scale to their u-weighted
// scatter about it divided by the total weight W, plus reg on the diagonal.
func mStepT(p Points, u []float64, W, reg float64, t *StudentT) {
	n, d := p.Len(), p.D
	clear(t.Mean)
	clear(t.Scale)
	su := 0.0
	for i := range n {
		wu := p.Weight(i) * u[i]
		su += wu
		for a, v := range p.Point(i) {
			t.Mean[a] += wu * v
		}
	}
	for a := range t.Mean {
		t.Mean[a] /= su
	}
	c := make([]float64, d)
	for i := range n {
		wu := p.Weight(i) * u[i]
		x := p.Point(i)
		for a := range d {
			c[a] = x[a] - t.Mean[a]
		}
		for a := range d {
			row := t.Scale[a*d : a*d+a+1]
			f := wu * c[a]
			for b := range row {
				row[b] += f * c[b]
			}
		}
	}
	for a := range d {
		for b := 0; b <= a; b++ {
			v := t.Scale[a*d+b] / W
			t.Scale[a*d+b], t.Scale[b*d+a] = v, v
		}
		t.Scale[a*d+a] += reg
	}
}
