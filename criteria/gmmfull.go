package criteria

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"github.com/kgauge/kgauge/internal/kmeans"
	"github.com/kgauge/kgauge/internal/lanes"
)

// GMMFull is a Gaussian mixture with full covariance matrices.
type GMMFull struct {
	K, D    int
	Weights []float64 // K mixing proportions
	Means   []float64 // K*D
	Covs    []float64 // K*D*D, row-major, symmetric
}

// GMMFullParams returns the number of free parameters of a K-component full-covariance mixture in
// D dimensions: (K - 1) + K D + K D (D + 1) / 2 (weights, means, covariances), as counted by
// scikit-learn's GaussianMixture(covariance_type="full").
func GMMFullParams(k, d int) int { return (k - 1) + k*d + k*d*(d+1)/2 }

// pruneGap is the log-density margin below which a component's responsibility is taken as 0:
// exp(-40) is about 4e-18, below the double-precision resolution of a sum of responsibilities.
const pruneGap = 40

// fullComp is a component prepared for density evaluation.
type fullComp struct {
	logc   float64   // ln pi_j - (D/2) ln 2 pi - (1/2) ln det Sigma_j
	l      []float64 // Cholesky factor L (Sigma = L L^T), row-major lower triangle, D*D
	invDia []float64 // 1 / L_tt
	lmax   float64   // largest eigenvalue of Sigma_j (for the pruning bound)
}

// prepare factors every covariance. A covariance that is not positive definite gets reg added to
// its diagonal, ten times more each time, up to six times; after that prepare fails.
func (g GMMFull) prepare(reg float64) ([]fullComp, error) {
	k, d := g.K, g.D
	comps := make([]fullComp, k)
	var ch mat.Cholesky
	var es mat.EigenSym
	var lt mat.TriDense
	for j := 0; j < k; j++ {
		cov := g.Covs[j*d*d : (j+1)*d*d]
		sym := mat.NewSymDense(d, append([]float64(nil), cov...))
		add := reg
		ok := ch.Factorize(sym)
		for try := 0; !ok && try < 6; try++ {
			if add <= 0 {
				add = 1e-12
			}
			for t := 0; t < d; t++ {
				sym.SetSym(t, t, cov[t*d+t]+add)
			}
			ok = ch.Factorize(sym)
			add *= 10
		}
		if !ok {
			return nil, fmt.Errorf("criteria: covariance of mixture component %d is not positive definite", j)
		}
		ch.LTo(&lt)
		c := fullComp{l: make([]float64, d*d), invDia: make([]float64, d)}
		logdet := 0.0
		for a := 0; a < d; a++ {
			for b := 0; b <= a; b++ {
				c.l[a*d+b] = lt.At(a, b)
			}
			c.invDia[a] = 1 / c.l[a*d+a]
			logdet += 2 * math.Log(c.l[a*d+a])
		}
		if es.Factorize(sym, false) {
			v := es.Values(nil)
			c.lmax = v[len(v)-1]
		}
		if !(c.lmax > 0) {
			c.lmax = math.Inf(1) // no pruning for this component
		}
		c.logc = math.Log(g.Weights[j]) - 0.5*float64(d)*math.Log(2*math.Pi) - 0.5*logdet
		comps[j] = c
	}
	return comps, nil
}

// mahalanobis returns (x - mu)^T Sigma^-1 (x - mu) = ||L^-1 (x - mu)||^2 by forward substitution;
// z is scratch of length D.
func (c *fullComp) mahalanobis(x, mu, z []float64) float64 {
	d := len(x)
	if d >= wideFrom {
		return c.mahalanobisWide(x, mu, z)
	}
	q := 0.0
	for a := 0; a < d; a++ {
		row := c.l[a*d : a*d+a]
		s := x[a] - mu[a]
		for b, v := range row {
			s -= v * z[b]
		}
		s *= c.invDia[a]
		z[a] = s
		q += s * s
	}
	return q
}

// wideFrom is the dimension from which mahalanobis and mahalanobis2 go through mahalanobisWide.
// BenchmarkGMMFit/full, the EM at k = 20 on 16,384 points: with gonum's dot product at every
// dimension, d = 24 took 0.44 s against 0.41 s, d = 48 2.55 against 2.84 s, d = 64 4.09 against
// 4.84 s.
const wideFrom = 40

// asmDotFrom is the row length from which mahalanobisWide takes a row's product with gonum's
// assembly dot product (floats.Dot); on shorter rows the call costs more than the loop.
const asmDotFrom = 24

// mahalanobisWide is mahalanobis with the longer rows' products taken by floats.Dot (SIMD).
func (c *fullComp) mahalanobisWide(x, mu, z []float64) float64 {
	d := len(x)
	q := 0.0
	short := min(d, asmDotFrom)
	for a := 0; a < short; a++ {
		s := x[a] - mu[a]
		for b, v := range c.l[a*d : a*d+a] {
			s -= v * z[b]
		}
		s *= c.invDia[a]
		z[a] = s
		q += s * s
	}
	for a := short; a < d; a++ {
		s := (x[a] - mu[a] - floats.Dot(c.l[a*d:a*d+a], z[:a])) * c.invDia[a]
		z[a] = s
		q += s * s
	}
	return q
}

// mahalanobis2 returns the squared Mahalanobis distances of x to (mu, c) and (mu2, c2), each
// summed in mahalanobis' order; z and z2 are scratch of length D.
func mahalanobis2(c, c2 *fullComp, x, mu, mu2, z, z2 []float64) (float64, float64) {
	d := len(x)
	if d >= wideFrom {
		return c.mahalanobisWide(x, mu, z), c2.mahalanobisWide(x, mu2, z2)
	}
	z, z2 = z[:d], z2[:d]
	q, q2 := 0.0, 0.0
	for a := 0; a < d; a++ {
		row, row2 := c.l[a*d:a*d+a], c2.l[a*d:a*d+a]
		row2 = row2[:len(row)]
		s, s2 := x[a]-mu[a], x[a]-mu2[a]
		for b, v := range row {
			s -= v * z[b]
			s2 -= row2[b] * z2[b]
		}
		s *= c.invDia[a]
		s2 *= c2.invDia[a]
		z[a], z2[a] = s, s2
		q += s * s
		q2 += s2 * s2
	}
	return q, q2
}

// LogLik returns the weighted log-likelihood sum_i w_i ln sum_j pi_j N(x_i | mu_j, Sigma_j),
// computed with the log-sum-exp trick. resp, if not nil (len n*K), receives the
// responsibilities; a component more than e^40 less likely than another at a point (by a bound
// from the Euclidean distance and the largest eigenvalue of its covariance, or exactly) gets
// responsibility 0 there without its Mahalanobis distance being computed. It fails when a
// covariance is not positive definite.
func (g GMMFull) LogLik(p Points, resp []float64) (float64, error) {
	comps, err := g.prepare(0)
	if err != nil {
		return 0, err
	}
	return g.logLik(p, comps, resp), nil
}

// ClassEntropy returns the weighted entropy of the mixture's soft classification of p,
// -sum_i w_i sum_j r_ij ln r_ij with r the responsibilities (0 ln 0 = 0): the term the integrated
// completed likelihood adds twice to BIC (Biernacki, Celeux & Govaert 2000). It fails when a
// covariance is not positive definite.
func (g GMMFull) ClassEntropy(p Points) (float64, error) {
	comps, err := g.prepare(0)
	if err != nil {
		return 0, err
	}
	resp := make([]float64, p.Len()*g.K)
	g.logLik(p, comps, resp)
	return classEntropy(p, resp, g.K), nil
}

// lanesFrom is the dimension from which logLik measures every component's Mahalanobis distance
// at once, four components in the lanes of one register (lanes.Solve4), before it decides which
// it needs; below it the distances are measured one or two at a time as needed, since in few
// dimensions most components lie beyond the pruning margin. From wideFrom the rows' products go
// through floats.Dot instead (mahalanobisWide), whose sums are in another order.
const lanesFrom = 8

// solveGroups is the mixture's components laid out for lanes.Solve4: means, Cholesky factors and
// the reciprocals of their diagonals transposed in groups of four (lanes.Group), the last group
// filled up with copies of the last component, whose distances are measured and not read.
type solveGroups struct {
	groups     int
	ct, lt, it []float64
	z, q       []float64 // Solve4's scratch and its distances, q[j] for component j
}

func newSolveGroups(g GMMFull, comps []fullComp) *solveGroups {
	k, d := g.K, g.D
	sg := &solveGroups{groups: (k + 3) / 4}
	n := 4 * sg.groups
	mu, l, iv := make([]float64, n*d), make([]float64, n*d*d), make([]float64, n*d)
	for j := 0; j < n; j++ {
		c := min(j, k-1)
		copy(mu[j*d:(j+1)*d], g.Means[c*d:(c+1)*d])
		copy(l[j*d*d:(j+1)*d*d], comps[c].l)
		copy(iv[j*d:(j+1)*d], comps[c].invDia)
	}
	sg.ct, sg.lt, sg.it = lanes.Group(nil, mu, sg.groups, d), lanes.Group(nil, l, sg.groups, d*d), lanes.Group(nil, iv, sg.groups, d)
	sg.z, sg.q = make([]float64, 8*d), make([]float64, n)
	return sg
}

func (g GMMFull) logLik(p Points, comps []fullComp, resp []float64) float64 {
	k, d := g.K, g.D
	lr := make([]float64, k)
	ub := make([]float64, k)
	exact := make([]bool, k)
	z, z2 := make([]float64, d), make([]float64, d)
	// With sg, every component's distance is measured first and the ones the pruning below asks
	// for are read from it: the same values (lanes.Solve4 is mahalanobis' loop bit for bit), so
	// the same components are kept and the same sums formed.
	var sg *solveGroups
	if d >= lanesFrom && d < wideFrom && k > 0 {
		sg = newSolveGroups(g, comps)
	}
	maha := func(j int, x []float64, z []float64) float64 {
		if sg != nil {
			return sg.q[j]
		}
		return comps[j].mahalanobis(x, g.Means[j*d:j*d+d], z)
	}
	ll := 0.0
	for i := 0; i < p.Len(); i++ {
		x := p.Point(i)
		if sg != nil {
			lanes.Solve4(x, sg.ct, sg.lt, sg.it, sg.groups, sg.z, sg.q)
		}
		// Upper bounds ln pi_j N <= logc_j - ||x - mu_j||^2 / (2 lmax_j); the best bound is
		// computed exactly first.
		top := 0
		for j := 0; j < k; j++ {
			ub[j] = comps[j].logc - 0.5*kmeans.Dist2(x, g.Means[j*d:j*d+d])/comps[j].lmax
			if ub[j] > ub[top] {
				top = j
			}
			exact[j] = false
		}
		lr[top] = comps[top].logc - 0.5*maha(top, x, z)
		exact[top] = true
		mx := lr[top]
		// The components left within the pruning margin go two at a time (two independent
		// dependency chains); the pair is chosen with mx as it stood before either.
		pend := -1
		for j := 0; j < k; j++ {
			if j == top || ub[j] < mx-pruneGap {
				continue
			}
			if pend < 0 {
				pend = j
				continue
			}
			var qa, qb float64
			if sg != nil {
				qa, qb = sg.q[pend], sg.q[j]
			} else {
				qa, qb = mahalanobis2(&comps[pend], &comps[j], x, g.Means[pend*d:pend*d+d], g.Means[j*d:j*d+d], z, z2)
			}
			lr[pend], lr[j] = comps[pend].logc-0.5*qa, comps[j].logc-0.5*qb
			exact[pend], exact[j] = true, true
			mx = max(mx, lr[pend], lr[j])
			pend = -1
		}
		if pend >= 0 {
			lr[pend] = comps[pend].logc - 0.5*maha(pend, x, z)
			exact[pend] = true
			mx = max(mx, lr[pend])
		}
		s := 0.0
		for j := 0; j < k; j++ {
			if exact[j] {
				s += math.Exp(lr[j] - mx)
			}
		}
		lse := mx + math.Log(s)
		ll += p.Weight(i) * lse
		if resp != nil {
			r := resp[i*k : i*k+k]
			for j := 0; j < k; j++ {
				r[j] = 0
				if exact[j] && lr[j]-lse > -pruneGap {
					r[j] = math.Exp(lr[j] - lse)
				}
			}
		}
	}
	return ll
}

// GMMFullFit fits a full-covariance Gaussian mixture to the weighted points by EM (Dempster,
// Laird & Rubin 1977) started from a k-means solution: weights = cluster weight shares, means =
// the k-means centres, covariances = weighted within-cluster covariances, each + opt.Reg on the
// diagonal (scikit-learn's reg_covar). Each M step uses weighted responsibilities w_i r_ij and
// adds opt.Reg to every covariance's diagonal; a component whose weight falls below 1e-12 of the
// total keeps its previous mean and covariance. EM stops when the log-likelihood per unit weight
// changes by <= opt.Tol or after opt.MaxIter iterations. It returns the model, its weighted
// log-likelihood on p and the number of EM iterations, or an error when a covariance cannot be
// factored.
func GMMFullFit(p Points, init Fit, opt GMMOptions) (GMMFull, float64, int, error) {
	g, ll, _, iters, err := gmmFullFit(p, init, opt)
	return g, ll, iters, err
}

// gmmFullFit is GMMFullFit that also returns the weighted entropy of the classification,
// -sum_i w_i sum_j r_ij ln r_ij, with the responsibilities r of the returned log-likelihood's E step.
func gmmFullFit(p Points, init Fit, opt GMMOptions) (GMMFull, float64, float64, int, error) {
	opt = opt.withDefaults()
	if opt.resp == nil {
		opt.resp = new([]float64) // em leaves its last responsibilities here for classEntropy
	}
	g := gmmFullFromFit(p, init, opt.Reg)
	ll, iters, err := g.em(p, opt)
	if err != nil {
		return g, math.NaN(), math.NaN(), iters, err
	}
	return g, ll, classEntropy(p, opt.respBuffer(p.Len()*g.K), g.K), iters, nil
}

// gmmFullFromFit returns the full-covariance mixture GMMFullFit starts from: the k-means fit's
// cluster weight shares, centres and weighted within-cluster covariances over p, each covariance
// plus reg on its diagonal.
func gmmFullFromFit(p Points, init Fit, reg float64) GMMFull {
	d, k := p.D, init.K
	dd := d * d
	g := GMMFull{K: k, D: d, Weights: make([]float64, k), Means: append([]float64(nil), init.Centres...),
		Covs: make([]float64, k*dd)}
	W := p.TotalWeight()
	for i, l := range init.Labels {
		w := p.Weight(i)
		x := p.Point(i)
		m := g.Means[int(l)*d : int(l)*d+d]
		c := g.Covs[int(l)*dd : int(l)*dd+dd]
		for a := 0; a < d; a++ {
			ea := w * (x[a] - m[a])
			row := c[a*d : a*d+d]
			for b := a; b < d; b++ {
				row[b] += ea * (x[b] - m[b])
			}
		}
		g.Weights[l] += w
	}
	for j := 0; j < k; j++ {
		c := g.Covs[j*dd : j*dd+dd]
		for a := 0; a < d; a++ {
			for b := a; b < d; b++ {
				v := 0.0
				if g.Weights[j] > 0 {
					v = c[a*d+b] / g.Weights[j]
				}
				c[a*d+b], c[b*d+a] = v, v
			}
			c[a*d+a] += reg
		}
		g.Weights[j] /= W
		if g.Weights[j] <= 0 {
			g.Weights[j] = 1e-300 // an empty k-means cluster: a component with no weight
		}
	}
	return g
}

// em runs GMMFullFit's EM on p from g's parameters (opt with its defaults set) and returns the
// weighted log-likelihood of its last E step and the iterations run; the responsibilities of that
// E step are left in opt's buffer.
func (g *GMMFull) em(p Points, opt GMMOptions) (float64, int, error) {
	d, k, n := g.D, g.K, p.Len()
	dd := d * d
	W := p.TotalWeight()
	resp := opt.respBuffer(n * k)
	var h heldPoints
	nk := make([]float64, k)
	sums, sq := make([]float64, k*d), make([]float64, k*dd)
	blk := newMBlock(d)
	prev := math.Inf(-1)
	ll := 0.0
	iters := 0
	for it := 1; it <= opt.MaxIter; it++ {
		if opt.stop != nil && opt.stop() {
			return math.NaN(), iters, errEMStopped
		}
		comps, err := g.prepare(opt.Reg)
		if err != nil {
			return math.NaN(), iters, err
		}
		ll = g.logLik(p, comps, resp)
		iters = it
		if math.Abs(ll-prev) <= opt.Tol*W {
			break
		}
		prev = ll
		// M step in one pass: scatter about the previous means m0, shifted afterwards,
		// Sigma = E[(x - m0)(x - m0)^T] - (mu - m0)(mu - m0)^T.
		clear(nk)
		clear(sums)
		clear(sq)
		h.list(resp, n, k)
		for j := 0; j < k; j++ {
			mStep(p, resp, h.of(j), j, k, g.Means[j*d:j*d+d], &nk[j], sums[j*d:j*d+d], sq[j*dd:j*dd+dd], &blk)
		}
		for j := 0; j < k; j++ {
			g.Weights[j] = nk[j] / W
			if nk[j] <= 1e-12*W {
				g.Weights[j] = math.Max(g.Weights[j], 1e-300)
				continue // keep the previous mean and covariance
			}
			sh := sums[j*d : j*d+d]
			for t := range sh {
				sh[t] /= nk[j]
			}
			c := g.Covs[j*dd : j*dd+dd]
			q := sq[j*dd : j*dd+dd]
			for a := 0; a < d; a++ {
				for b := a; b < d; b++ {
					v := q[a*d+b]/nk[j] - sh[a]*sh[b]
					c[a*d+b], c[b*d+a] = v, v
				}
				c[a*d+a] += opt.Reg
			}
			for t := range sh {
				g.Means[j*d+t] += sh[t]
			}
		}
	}
	return ll, iters, nil
}

// classEntropy returns -sum_i w_i sum_j r_ij ln r_ij over the n*k responsibilities resp.
func classEntropy(p Points, resp []float64, k int) float64 {
	e := 0.0
	for i := 0; i < p.Len(); i++ {
		s := 0.0
		for _, r := range resp[i*k : i*k+k] {
			if r > 0 {
				s -= r * math.Log(r)
			}
		}
		e += p.Weight(i) * s
	}
	return e
}

// heldPoints lists, for each component, the points whose responsibility for it is not zero,
// in index order: the only points its M step adds (mStep), so that the M step does not read
// every point's responsibility for every component (k strided passes over n·k values). The lists
// share one buffer, component j's at idx[off[j]:off[j+1]], of at most n·k indexes, reused from
// one EM iteration to the next.
type heldPoints struct {
	idx  []int32
	off  []int
	next []int // list's scratch
}

// list sets h to the lists of the n×k responsibilities resp (row-major), in two passes over
// them in their order: one counts each component's points, one writes their indexes.
func (h *heldPoints) list(resp []float64, n, k int) {
	h.off = slices.Grow(h.off[:0], k+1)[:k+1]
	clear(h.off)
	for i := 0; i < n; i++ {
		for j, r := range resp[i*k : i*k+k] {
			if r != 0 {
				h.off[j+1]++
			}
		}
	}
	for j := 0; j < k; j++ {
		h.off[j+1] += h.off[j]
	}
	if total := h.off[k]; cap(h.idx) < total {
		h.idx = make([]int32, total)
	} else {
		h.idx = h.idx[:total]
	}
	h.next = append(h.next[:0], h.off[:k]...)
	for i := 0; i < n; i++ {
		for j, r := range resp[i*k : i*k+k] {
			if r != 0 {
				h.idx[h.next[j]] = int32(i)
				h.next[j]++
			}
		}
	}
}

// of returns component j's list.
func (h *heldPoints) of(j int) []int32 { return h.idx[h.off[j]:h.off[j+1]] }

// mBlock is mStep's scratch: up to four centred points (e[c], views of one buffer, all, the
// points one after another as lanes.AddOuter4 takes them) and their weights.
type mBlock struct {
	e   [4][]float64
	all []float64
	w   [4]float64
}

// newMBlock returns an mBlock for points of d values.
func newMBlock(d int) mBlock {
	blk := mBlock{all: make([]float64, 4*d)}
	for c := range blk.e {
		blk.e[c] = blk.all[c*d : (c+1)*d]
	}
	return blk
}

// mStep accumulates component j's M-step sums over p: *nk += sum_i w_i r_ij, s += sum_i w_i r_ij
// e_i and the upper triangle of q += sum_i w_i r_ij e_i e_i^T, with e_i = x_i - m0 (m0 the
// previous mean). Only the points in held are visited (in its order, the index order:
// heldPoints lists every point whose r_ij is not zero); those with a zero weighted responsibility
// are skipped, and the others go through the outer product four at a time (each row of q loaded once
// per four points).
func mStep(p Points, resp []float64, held []int32, j, k int, m0 []float64, nk *float64, s, q []float64, blk *mBlock) {
	d := p.D
	c := 0
	for _, i32 := range held {
		i := int(i32)
		wr := p.Weight(i) * resp[i*k+j]
		if wr == 0 {
			continue
		}
		*nk += wr
		e := blk.e[c][:d]
		for t, v := range p.Point(i)[:d] {
			e[t] = v - m0[t]
			s[t] += wr * e[t]
		}
		blk.w[c] = wr
		c++
		if c == 4 {
			outer4(q, d, blk)
			c = 0
		}
	}
	outerFirst(q, d, blk, c)
}

// outerFirst adds the weighted outer products of the first c points in blk to the upper
// triangle of q, one point at a time (the points left over after the last group of four).
func outerFirst(q []float64, d int, blk *mBlock, c int) {
	for b := 0; b < c; b++ {
		e, wr := blk.e[b][:d], blk.w[b]
		for a := 0; a < d; a++ {
			ea := wr * e[a]
			row := q[a*d+a : a*d+d]
			for t, eb := range e[a:] {
				row[t] += ea * eb
			}
		}
	}
}

// outer4 adds the weighted outer products of the four points in blk to the upper triangle of q
// (lanes.AddOuter4: q[a d + b] += a0 e0[b] + a1 e1[b] + a2 e2[b] + a3 e3[b] with ac = wc ec[a],
// each row of q loaded once per four points).
func outer4(q []float64, d int, blk *mBlock) {
	lanes.AddOuter4(q, d, blk.all, &blk.w)
}
