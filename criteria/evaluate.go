package criteria

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// Random stream purposes; each (k, purpose) pair has its own stream derived from Options.Seed.
const (
	streamFit = iota + 1
	streamSilhouette
	streamGapData
	streamGapBox
	streamGapPCA
	streamWard
	streamGapSample
	streamBoxRefs
	streamPCARefs
	streamChecks       // the points behind the one-mode check and the split halves
	streamModes        // the one-mode check's halves and 2-means fits
	streamSplit        // the split halves' k-means fits at each k
	streamClusterModes // the halves and 2-means fits of each cluster at each k
	streamSplitPlain   // the k-means fits of the split halves in the rows' own scale at each k
)

// rngFor returns the random stream for (seed, k, purpose): a PCG seeded with the seed and a
// splitmix64 hash of k and purpose, so streams are independent of worker scheduling.
func rngFor(seed uint64, k, purpose int) *rand.Rand {
	z := uint64(k)<<8 | uint64(purpose)
	z += 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	z ^= z >> 31
	return rand.New(rand.NewPCG(seed, z))
}

// gapTol is the Lloyd tolerance of every gap-statistic fit, data side and references alike: a
// relative tolerance of 1e-5 changes ln W by about 1e-5, far below the simulation error s_k.
const gapTol = 1e-5

// gapRaceTol is the Lloyd tolerance at which the sweep starts of every gap fit race before the
// best runs on to gapTol (fitPath's Race). On the ten reference sets of
// BenchmarkCriteriaStage/d=16 it cut their paths' time by about 35% and moved mean_b ln W*_kb
// by at most 0.001 at any k (0.0001 between neighbouring k), against s_k of about 0.004
// (DEVELOPERS.md, "Criteria stage, round 2").
const gapRaceTol = 1e-3

// gapRefEnds seeds the gap's reference paths by k-means++ only at the ends of the k range
// (fitPath's EndsOnly). On uniform reference sets the sweeps from k - 1 and k + 1 give
// every k between a start as good as an independent seeding, and the seeding at the top k gives
// the downward sweep its start (without it, 64-dimensional references lost up to 0.016 in
// mean_b ln W*_kb near the top k). On ten box references of 2,000 points, mean_b ln W*_kb moved
// by at most 0.0011 at any k in 4 to 64 dimensions (0.0020 in 2 and 8), against 0.0007-0.0013
// between two seeds of the full path and s_k of about 0.004, and the reference paths took 0.60-0.78 of
// their time (DEVELOPERS.md, issue 15, "Criteria stage, round 10").
const gapRefEnds = true

// gmmMaxIter and gmmTol bound the EM of the mixtures (full and spherical) at each k (EM starts
// from the k-means fit): at most 20 iterations, stopping when the log-likelihood per unit weight moves by
// <= 1e-3 (scikit-learn GaussianMixture's tol; its max_iter is 100). On the demo lake (200,000 rows,
// 24 columns, k = 1..20) 100 iterations made the criteria stage 2.6x slower than the diagonal
// model's and 20 iterations 0.9x, with the same votes (DEVELOPERS.md, issue 12).
const (
	gmmMaxIter = 20
	gmmTol     = 1e-3
)

// wardDirectMax is the largest coreset agglomerated directly by Ward linkage (O(m^3)); larger
// coresets are first reduced to the centroids of a finer k-means fit.
const wardDirectMax = 400

// Evaluate scores every k in opt.MinK..opt.MaxK from the summary and returns the per-k scores,
// the criteria's votes and the verdict. Zero option fields take DefaultOptions' values.
//
// For each k it fits weighted k-means on the coreset (fitPath: the Summary's seed centres for k,
// if any, plus opt.Restarts k-means++ seedings, more where a Lloyd iteration is cheap, then
// sweeps that start k from the k-1 solution plus a k-means++ point and from the k+1 solution with
// its cheapest pair merged; the lowest cost kept) and computes from that fit the WCSS (scaled to
// N rows), the silhouette (SilhouetteAnchors, opt.Anchors anchors), the simplified silhouette,
// Calinski–Harabasz and Davies–Bouldin (on the weighted coreset), a full-covariance GMM fitted by
// EM from the k-means fit (GMMFullFit; 1e-6 times the mean per-dimension variance added to every
// covariance's diagonal; at most gmmMaxIter (20) iterations, tolerance 1e-3 per unit weight;
// log-likelihood scaled by N / coreset weight less the coreset fit's optimism (fitExcess), BIC and AICc (AIC with
// its small-sample correction) with the real N and p = GMMFullParams; ICL = BIC + 2 × the entropy
// of the EM's last soft classification, scaled alike; where the points are fewer than ten per
// parameter of a full mixture at opt.MaxK, a spherical one too, each k scored by the one of lower
// BIC, see mixtureFamilies), and BICKMeans (corrected like the mixture). At k = 1 it also fits one
// multivariate Student t by ECME (StudentTFit, the same bounds), scored like the mixtures
// (BICStudentT).
// The gap statistic uses n = min(opt.GapSample, sample size) points of the uniform sample (a
// seeded subsample without replacement; if the Summary has no sample, n points drawn from the
// coreset in proportion to weight) against opt.GapRefs reference sets of n points in the
// bounding box Min/Max (gap_box) and in the principal-component box (gap_pca, PCABox over the
// sample and the coreset); the same B reference sets are clustered for every k. Ward linkage runs
// on the weighted coreset itself when it has at most 400 points, and otherwise on the weighted
// centroids of a finer fit with max(3 MaxK, 50) centres.
//
// The gap fits are fitPaths too (opt.GapRestarts k-means++ seedings and the sweeps, whose starts
// race at Lloyd tolerance 1e-3 before the best runs on to 1e-5), the data side also started from the main fit's centres at each k and every
// reference set on a path of its own, seeded only at the ends of the k range and swept between
// them (fitPath's EndsOnly, see gapRefEnds). Each criterion then votes (Result.Votes, CriterionNames order): elbow = Kneedle on WCSS(k)
// over the valid k; silhouette, simplified_silhouette and calinski_harabasz = argmax over k >= 2;
// davies_bouldin = argmin over k >= 2; gap_box and gap_pca = GapRule; bic_kmeans = argmin over
// all k; bic_gmm, aic_gmm and icl_gmm = argmin over the k whose mixture (of a family they compare) has at
// least two of the coreset's points per parameter (the mixture is fitted for those k only, and a
// minimum at the largest of them, with larger k in the range, has no say; bic_gmm's k >= 2 gives way
// to k = 1 when BICStudentT is lower, heavyTailedOne); ward = the largest relative jump of the merge costs (see
// wardVote); split_agreement = splitVote on whitened halves of the sample; the one-mode check
// (modeCheck) runs once; the verdict combines them (Decide in vote.go), and FarRows is measured on the
// verdict's fit.
//
// A k is Valid when its coreset fit has no empty cluster; criteria consider
// valid k only (k larger than the number of distinct points is never valid). If every coreset
// point coincides (zero spread), all scores but WCSS are NaN, every criterion abstains and the
// verdict is k = 1 with Structure false. Work is spread over opt.Workers goroutines, one k at a
// time; the result does not depend on the number of workers. Evaluate returns ctx.Err() (wrapped)
// if ctx is cancelled.
func Evaluate(ctx context.Context, s Summary, opt Options) (*Result, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	opt = opt.withDefaults()
	if err := s.validate(); err != nil {
		return nil, err
	}
	workers := opt.Workers
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	nk := opt.MaxK - opt.MinK + 1
	res := &Result{PerK: make([]Scores, nk), Fits: make([]Fit, nk), Options: opt}
	core := s.Coreset
	W := core.TotalWeight()
	scale := s.N / W
	excess := fitExcess(core, s.N)
	_, _, tss, _ := clusterMeans(core, make([]int32, core.Len()), 1)

	if !(tss > 0) {
		for i := range res.PerK {
			k := opt.MinK + i
			res.PerK[i] = nanScores(k)
			res.PerK[i].WCSS = 0
			res.Fits[i] = kmeans.Fit(core, k, kmeans.FitOptions{Restarts: 1, Rand: rngFor(opt.Seed, k, streamFit)})
		}
		for _, c := range CriterionNames() {
			res.Votes = append(res.Votes, Vote{Criterion: c, Abstain: true, Note: "all points identical"})
		}
		res.Verdict = Verdict{K: 1, Structure: false, Disagree: []string{}, Agree: []string{},
			Rule: "all points identical (zero spread): k = 1, no cluster structure"}
		newProgress(opt.Progress, 1).finish()
		return res, nil
	}

	// Shared gap inputs: the data side and the B reference sets of each kind.
	gapData := gapSide(s, opt.GapSample, rngFor(opt.Seed, 0, streamGapSample))
	nref := gapData.Len()
	boxRefs := BoxReference(s.Min, s.Max, nref, opt.GapRefs, rngFor(opt.Seed, 0, streamBoxRefs))
	var pcaRefs []Points
	if _, lo, hi, err := PCABox(s.Cov, s.Mean, s.Sample, s.Coreset); err == nil {
		pcaRefs = PCAReference(lo, hi, nref, opt.GapRefs, rngFor(opt.Seed, 0, streamPCARefs))
	}
	trace := 0.0
	for t := 0; t < s.D; t++ {
		trace += s.Cov[t*s.D+t]
	}
	if !(trace > 0) {
		trace = tss / W
	}
	reg := 1e-6 * trace / float64(s.D)

	checks := gapSide(s, checkPoints, rngFor(opt.Seed, 0, streamChecks))
	splitA, splitB := splitHalves(whiten(checks, s.Cov), rngFor(opt.Seed, 0, streamSplit))
	plainA, plainB := splitHalves(checks, rngFor(opt.Seed, 0, streamSplit)) // the same rows, unwhitened

	stop := func() bool { return ctx.Err() != nil }

	// The work, with its expected cost (schedule.go): the main fit path (stage 1: restarts per
	// k in parallel, then the sweeps), and jobs on a pool. Jobs that do not need the main fits
	// (the one-mode check, Ward, the gap's reference paths) start at once beside stage 1; the
	// per-k scores and the gap's data side follow it. The pool runs the most expensive queued
	// job first and bounds the running work to workers slots.
	n, d := core.Len(), s.D
	mainOpt := mainPathOptions(s, opt, workers, stop)
	mainCost := pathCost(core, opt.MinK, opt.MaxK, mainOpt)
	gapHi := min(opt.MaxK, nref)
	refCost := gapPathCost(nref, opt.MinK, gapHi, d)
	var jobs []job
	jobs = append(jobs, job{cost: restartCost(checkPoints, 3, d, 12), run: func() {
		res.Modes, _ = modeCheck(checks, rngFor(opt.Seed, 0, streamModes))
	}})
	var ward []Merge
	if !opt.SkipWard {
		kf := WardLeaves(n, opt.MaxK)
		jobs = append(jobs, job{cost: restartCost(n, kf, d, 1) + float64(kf*kf*kf), run: func() {
			res.Ward, ward = wardLeaves(core, opt, scale)
		}})
	}
	var dataW []float64
	boxW := make([][]float64, len(boxRefs))
	pcaW := make([][]float64, len(pcaRefs))
	gapPath := func(p Points, init bool, rng func(k int) *rand.Rand, fits []Fit) []float64 {
		po := pathOptions{Restarts: opt.GapRestarts, Lloyd: kmeans.LloydOptions{Tol: gapTol}, Race: kmeans.LloydOptions{Tol: gapRaceTol},
			Rand: rng, Stop: stop}
		if init {
			po.Init = func(k int) [][]float64 { return [][]float64{fits[k-opt.MinK].Centres} }
		} else {
			po.EndsOnly = gapRefEnds // a reference set
		}
		fs := fitPath(p, opt.MinK, gapHi, po)
		w := make([]float64, len(fs))
		for i, f := range fs {
			w[i] = f.Cost
		}
		return w
	}
	if gapHi >= opt.MinK {
		for b := range boxRefs {
			jobs = append(jobs, job{cost: refCost, run: func() {
				boxW[b] = gapPath(boxRefs[b], false, func(k int) *rand.Rand { return rngFor(opt.Seed, refStream(k, b), streamGapBox) }, nil)
			}})
		}
		for b := range pcaRefs {
			jobs = append(jobs, job{cost: refCost, run: func() {
				pcaW[b] = gapPath(pcaRefs[b], false, func(k int) *rand.Rand { return rngFor(opt.Seed, refStream(k, b), streamGapPCA) }, nil)
			}})
		}
	}
	var later []job
	var fits []Fit
	if gapHi >= opt.MinK {
		later = append(later, job{cost: refCost / 2, run: func() {
			dataW = gapPath(gapData, true, func(k int) *rand.Rand { return rngFor(opt.Seed, k, streamGapData) }, fits)
		}})
	}
	// The mixtures: one job per k, ranked by the cost of the mixtures from its k up (so the
	// smallest k run first, ahead of the score jobs). A job whose k lies above a k where BIC and
	// ICL are already settled (mixturesSettled, over k that have all finished) is skipped, and
	// after the pool everything above the first settled k is dropped (mixtureStop), so the result
	// does not depend on which jobs ran. At most one job per worker runs at once, each on a
	// responsibilities buffer of its own, sized once for the largest k any family is fitted at.
	mix := make([]mixtureFit, nk)
	mixDone := make([]bool, nk)
	var mixMu sync.Mutex
	fams := mixtureFamilies(opt.MaxK, s.N, n, d)
	mixCost := func(k int) float64 { return float64(len(fams)) * mixtureCost(n, k, d) }
	kTop := mixtureTopK(opt.MinK, opt.MaxK, n, d, fams[len(fams)-1])
	var buffers [][]float64
	for k := opt.MaxK; k >= opt.MinK; k-- {
		rank := 0.0
		for j := k; j <= opt.MaxK; j++ {
			rank += mixCost(j)
		}
		later = append(later, job{cost: mixCost(k), rank: rank, run: func() {
			i := k - opt.MinK
			mixMu.Lock()
			skip := settledBelow(mix, mixDone, i)
			var buf []float64
			if len(buffers) > 0 {
				buf, buffers = buffers[len(buffers)-1], buffers[:len(buffers)-1]
			}
			mixMu.Unlock()
			if skip {
				return
			}
			if buf == nil {
				buf = make([]float64, 0, n*kTop)
			}
			// A fit still running when the mixtures settle below its k is cut short and not
			// kept: mixtureStop would drop it, so the result is that of every job running to the end.
			settled := func() bool {
				mixMu.Lock()
				defer mixMu.Unlock()
				return settledBelow(mix, mixDone, i)
			}
			m := mixtureK(core, fits[i], k, s, opt, scale, excess, reg, &buf, settled)
			mixMu.Lock()
			if !settledBelow(mix, mixDone, i) {
				mix[i], mixDone[i] = m, true
			}
			buffers = append(buffers, buf)
			mixMu.Unlock()
		}})
	}
	for k := opt.MaxK; k >= opt.MinK; k-- {
		later = append(later, job{cost: scoreCost(n, k, d, opt.Anchors, splitA.Len()), run: func() {
			sc := scoreK(core, fits[k-opt.MinK], k, s, opt, scale, excess, reg, stop)
			if sc.Valid && !stop() {
				sc.SplitAgreement = splitAgreement(splitA, splitB, k, 2, rngFor(opt.Seed, k, streamSplit))
				if k > 1 {
					sc.SplitAgreementPlain = splitAgreement(plainA, plainB, k, 2, rngFor(opt.Seed, k, streamSplitPlain))
				}
				sc.ClusterModes, sc.ClusterModesCover, _ = ClusterModes(checks, fits[k-opt.MinK].Centres, k, rngFor(opt.Seed, k, streamClusterModes))
			}
			res.PerK[k-opt.MinK] = sc
		}})
	}
	total := mainCost
	for _, j := range append(jobs, later...) {
		total += j.cost
	}
	prog := newProgress(opt.Progress, total)
	pl := newPool(workers, stop, prog)

	// Stage 1: the k-means fit of every k on the coreset.
	reported := 0.0
	var mu sync.Mutex
	mainOpt.Pool = pl
	mainOpt.Holding = func() { pl.add(jobs...) }
	mainOpt.Report = func(units float64) { // the restarts report from several goroutines
		mu.Lock()
		reported += units
		mu.Unlock()
		prog.add(units)
	}
	fits = fitPath(core, opt.MinK, opt.MaxK, mainOpt)
	prog.add(mainCost - reported)
	if err := ctx.Err(); err != nil {
		pl.wait()
		return nil, fmt.Errorf("criteria: evaluate: %w", err)
	}
	copy(res.Fits, fits)

	// Stage 2: the per-k scores and the gap's data side (started from the main fits at each k).
	pl.add(later...)
	pl.wait()
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("criteria: evaluate: %w", err)
	}
	prog.finish()
	if stop := mixtureStop(mix, mixDone, opt.MinK, opt.MaxK, s.N, n, d); stop > 0 {
		res.MixturesStopAt = stop
		for i := stop + 1 - opt.MinK; i < nk; i++ {
			mix[i] = mixtureFit{}
		}
	}
	for i, m := range mix {
		if sc := &res.PerK[i]; m.ok && sc.Valid {
			sc.LogLikGMM, sc.BICGMM, sc.AICGMM, sc.ICLGMM, sc.MixtureFamily = m.ll, m.bic, m.aic, m.icl, m.family
		}
	}
	for i := range dataW {
		sc := &res.PerK[i]
		if !(dataW[i] > 0) {
			continue
		}
		sc.LogW = math.Log(dataW[i])
		if m, sk, ok := refLogW(boxW, i); ok {
			sc.GapBox, sc.GapBoxS = m-sc.LogW, sk
		}
		if m, sk, ok := refLogW(pcaW, i); ok {
			sc.GapPCA, sc.GapPCAS = m-sc.LogW, sk
		}
	}
	best, h, j := wardVote(ward, opt.MinK, opt.MaxK)
	for i := range res.PerK {
		res.PerK[i].WardHeight, res.PerK[i].WardJump = h[i], j[i]
	}
	res.Votes = votes(res.PerK, best, s.N, core.Len(), s.D, opt)
	res.Verdict = verdict(res, opt)
	res.Far = farRows(core, res)
	return res, nil
}

// mainFits returns Evaluate's k-means fit of every k on the coreset (opt with defaults applied):
// fitPath with opt.Restarts k-means++ seedings plus the Summary's seed centres for k.
func mainFits(s Summary, opt Options, workers int, stop func() bool) []Fit {
	return fitPath(s.Coreset, opt.MinK, opt.MaxK, mainPathOptions(s, opt, workers, stop))
}

// mainPathOptions returns the fitPath options of mainFits.
func mainPathOptions(s Summary, opt Options, workers int, stop func() bool) pathOptions {
	return pathOptions{
		Restarts: opt.Restarts,
		Cheap:    cheapWork,
		Init: func(k int) [][]float64 {
			if c, ok := s.Seeds[k]; ok && len(c) == k*s.D {
				return [][]float64{c}
			}
			return nil
		},
		Rand:    func(k int) *rand.Rand { return rngFor(opt.Seed, k, streamFit) },
		Workers: workers,
		Stop:    stop,
	}
}

// refLogW returns mean_b ln W*_kb and s_k (see GapStat) from the reference costs w[b][i] at
// index i; ok is false when there are no references or some cost is not positive.
func refLogW(w [][]float64, i int) (mean, sk float64, ok bool) {
	if len(w) == 0 {
		return 0, 0, false
	}
	lw := make([]float64, len(w))
	for b := range w {
		if i >= len(w[b]) || !(w[b][i] > 0) {
			return 0, 0, false
		}
		lw[b] = math.Log(w[b][i])
		mean += lw[b]
	}
	B := float64(len(w))
	mean /= B
	v := 0.0
	for _, x := range lw {
		v += (x - mean) * (x - mean)
	}
	return mean, math.Sqrt(v/B) * math.Sqrt(1+1/B), true
}

// refStream folds the reference set number b into the k argument of rngFor, so every (k, set)
// pair has a stream of its own.
func refStream(k, b int) int { return k | (b+1)<<16 }

// fitExcess is the share by which a fit to the coreset flatters the likelihoods scaled to n rows:
// n/n_eff - 1, floored at 0, with n_eff = (Σw)²/Σw² the coreset's effective size (Kish). A model
// with p parameters fitted to n_eff points gains about p/2 in log-likelihood on those points over
// unseen ones (the optimism behind AIC, Akaike 1974); scaled by n/n_eff to n rows that is
// p/2 · n/n_eff, against the p/2 a fit to all n rows would gain. Left uncorrected, the excess
// p/2 · (n/n_eff - 1) outgrows BIC's p/2 · ln n once n > n_eff · ln n (about 230,000 rows at the
// default coreset), and the likelihood criteria then improve up to max-k on any large input.
// An exact summary (unit weights, n_eff = n) has no excess.
func fitExcess(core Points, n float64) float64 {
	sw, sw2 := 0.0, 0.0
	for i := range core.Len() {
		w := core.Weight(i)
		sw += w
		sw2 += w * w
	}
	if !(sw2 > 0) {
		return 0
	}
	return max(0, n/(sw*sw/sw2)-1)
}

// scoreK computes the per-k scores of Evaluate (all but the gap, Ward and mixture columns) from
// the fit. The likelihood criteria (bic_kmeans, and the Student t at k = 1) are corrected for the
// coreset fit's optimism: p · excess is added to each, p their parameter count (fitExcess).
func scoreK(core Points, fit Fit, k int, s Summary, opt Options, scale, excess, reg float64, stop func() bool) Scores {
	sc := nanScores(k)
	sc.WCSS = fit.Cost * scale
	// A fit with zero cost and no empty cluster (k equal to the number of distinct points) is a
	// perfect partition and stays valid; an empty cluster means k exceeds what the data holds.
	sc.Valid = true
	for _, z := range fit.Sizes {
		if !(z > 0) {
			sc.Valid = false
		}
	}
	if !sc.Valid || stop() {
		return sc
	}
	if k >= 2 {
		est := SilhouetteAnchors(core, fit.Labels, k, opt.Anchors, rngFor(opt.Seed, k, streamSilhouette))
		sc.Silhouette, sc.SilhouetteLo, sc.SilhouetteHi = est.Mean, est.Lo, est.Hi
		sc.SimplifiedSilhouette = SimplifiedSilhouette(core, fit.Labels, fit.Centres)
		sc.CalinskiHarabasz = CalinskiHarabasz(core, fit.Labels, k)
		sc.DaviesBouldin = DaviesBouldin(core, fit.Labels, k)
	}
	if stop() {
		return sc
	}
	if k == 1 {
		if _, ll, _, err := StudentTFit(core, GMMOptions{Reg: reg, MaxIter: gmmMaxIter, Tol: gmmTol}); err == nil {
			p := StudentTParams(s.D)
			sc.BICStudentT = BIC(ll*scale-float64(p)/2*excess, p, s.N)
		}
	}
	sizes := make([]float64, k)
	for j, z := range fit.Sizes {
		sizes[j] = z * scale
	}
	sc.BICKMeans = BICKMeans(sizes, fit.Cost*scale, s.D) + float64(BICKMeansParams(k, s.D))*excess
	return sc
}

// mixtureFit holds the mixture scores of one k (mixtureK); ok is false where no family was fitted.
type mixtureFit struct {
	ok                bool
	k                 int
	ll, bic, aic, icl float64
	family            MixtureFamily
}

// mixtureK fits, at one k, each family the mixture criteria compare (mixtureFamilies) where the
// points carry it (familyThinAt; k = 1 always), by EM from the k-means fit, and returns the scores
// of the one of lowest BIC: the log-likelihood scaled to N rows less the coreset fit's optimism
// (p · excess / 2), BIC, AICc and ICL. ok is false when the fit has an empty cluster or no family
// was fitted. resp is the EM's responsibilities buffer and stop may end the EM (fitMixture).
func mixtureK(core Points, fit Fit, k int, s Summary, opt Options, scale, excess, reg float64, resp *[]float64, stop func() bool) mixtureFit {
	var m mixtureFit
	for _, z := range fit.Sizes {
		if !(z > 0) {
			return m
		}
	}
	for _, f := range mixtureFamilies(opt.MaxK, s.N, core.Len(), s.D) {
		if k >= 2 && familyThinAt(f, k, s.N, core.Len(), s.D) {
			continue
		}
		ll, en, err := fitMixture(f, core, fit, reg, resp, stop)
		if err != nil {
			continue
		}
		p := f.Params(k, s.D)
		ll = ll*scale - float64(p)/2*excess
		if bic := BIC(ll, p, s.N); !m.ok || bic < m.bic {
			m = mixtureFit{ok: true, k: k, ll: ll, bic: bic, aic: AICc(ll, p, s.N), icl: bic + 2*en*scale, family: f}
		}
	}
	return m
}

// mixtureRise and mixtureAbove define where BIC and ICL are settled (mixturesSettled): both have
// risen at each of the last mixtureRise k from above their lowest value, or both have stayed above
// it, with one mixture family throughout, for the last mixtureAbove k. Evaluate then fits no larger
// mixture. The EM is the criteria stage's largest cost at large max-k and grows with k; above the
// true k it rarely converges within its iterations, so on large inputs the curves wander there
// instead of climbing (hence the second test). AICc, whose penalty is the lightest, often falls
// slowly on to max-k on large inputs and is not waited for: it chooses among the k fitted, and has
// no say when its lowest value is at the last of them (votes). A minimum of another family does
// not count as passed: in many columns the full covariance at k = 1 beats the spherical mixtures
// of the next k until k nears the groups' count. Chosen on the benchmark grid's stored curves
// (DEVELOPERS.md, issue 15, "Criteria stage, round 4").
//
// The six k of the second test grow to a third of the k of the lowest value where that is more
// (mixtureAboveFor): at large k the EM's 20 iterations leave the curves noisy far below the
// groups' count. On Fränti's Birch2 (100 groups) BIC is lowest at 48, stays above that from
// unconverged fits for the next twelve k, and is lowest at 100 (DEVELOPERS.md, issue 15,
// "Criteria stage, round 5"). Up to k = 18 the window is six k, as the grid chose.
const (
	mixtureRise  = 4
	mixtureAbove = 6
)

// mixtureAboveFor is the second test's window for a lowest value at k: mixtureAbove, or a third
// of k where that is more.
func mixtureAboveFor(k int) int {
	return max(mixtureAbove, (k+2)/3)
}

// mixturesSettled reports whether the mixtures fitted at indexes 0..i (fits[j].ok) are settled at
// i (see mixtureRise).
func mixturesSettled(fits []mixtureFit, i int) bool {
	climbed := func(f func(mixtureFit) float64, _ int) bool {
		for j := i - mixtureRise + 1; j <= i; j++ {
			if !fits[j-1].ok || !fits[j].ok || !(f(fits[j]) > f(fits[j-1])) {
				return false
			}
		}
		return true
	}
	oneFamily := func(_ func(mixtureFit) float64, best int) bool {
		for j := best + 1; j <= i; j++ {
			if !fits[j].ok || fits[j].family != fits[best].family {
				return false
			}
		}
		return true
	}
	return mixturesPast(fits, i, func(int) int { return mixtureRise }, climbed) || mixturesPast(fits, i, mixtureAboveFor, oneFamily)
}

// mixtureCurves are the scores whose settling ends the mixtures: BIC and ICL.
var mixtureCurves = []func(mixtureFit) float64{
	func(m mixtureFit) float64 { return m.bic },
	func(m mixtureFit) float64 { return m.icl },
}

// mixturesPast reports whether BIC and ICL each have their lowest value (over the fitted
// mixtures at indexes 0..i) at least m(k of that value) indexes before i, and pass test from
// there: test gets the curve and the index of its lowest value.
func mixturesPast(fits []mixtureFit, i int, m func(k int) int, test func(f func(mixtureFit) float64, best int) bool) bool {
	for _, f := range mixtureCurves {
		best := -1
		for j := 0; j <= i; j++ {
			if v := f(fits[j]); fits[j].ok && !math.IsNaN(v) && (best < 0 || v < f(fits[best])) {
				best = j
			}
		}
		if best < 0 || i-best < m(fits[best].k) || !test(f, best) {
			return false
		}
	}
	return true
}

// settledBelow reports whether the mixtures are settled (mixturesSettled) at some index below i
// whose mixtures, and every one below it, have finished (done).
func settledBelow(fits []mixtureFit, done []bool, i int) bool {
	for j := 0; j < i && done[j]; j++ {
		if mixturesSettled(fits, j) {
			return true
		}
	}
	return false
}

// mixtureStop returns the k at which Evaluate's mixtures stop: the smallest k below maxK at which
// they are settled (every smaller k finished) and a larger one could still be fitted
// (mixturePassedOver); 0 when there is none.
func mixtureStop(fits []mixtureFit, done []bool, minK, maxK int, rows float64, points, dims int) int {
	for i := 0; i < len(fits)-1 && done[i]; i++ {
		if over, _ := mixturePassedOver(minK+i+1, maxK, rows, points, dims); over {
			return 0
		}
		if mixturesSettled(fits, i) {
			return minK + i
		}
	}
	return 0
}

// gapSide returns the data side of the gap statistic: min(n, sample size) points of the sample
// (a seeded subsample without replacement when the sample is larger), or, without a sample,
// min(n, coreset size) points drawn from the coreset with probability proportional to weight.
func gapSide(s Summary, n int, rng *rand.Rand) Points {
	d := s.D
	if m := s.Sample.Len(); m > 0 {
		if m <= n {
			return Points{X: s.Sample.X, D: d}
		}
		perm := rng.Perm(m)[:n]
		x := make([]float64, 0, n*d)
		for _, i := range perm {
			x = append(x, s.Sample.Point(i)...)
		}
		return Points{X: x, D: d}
	}
	c := s.Coreset
	if c.Len() < n {
		n = c.Len()
	}
	cum := make([]float64, c.Len())
	acc := 0.0
	for i := range cum {
		acc += c.Weight(i)
		cum[i] = acc
	}
	x := make([]float64, 0, n*d)
	for t := 0; t < n; t++ {
		u := rng.Float64() * acc
		lo, hi := 0, len(cum)-1
		for lo < hi {
			mid := (lo + hi) / 2
			if cum[mid] > u {
				hi = mid
			} else {
				lo = mid + 1
			}
		}
		x = append(x, c.Point(lo)...)
	}
	return Points{X: x, D: d}
}

// wardLeaves runs the Ward linkage of Evaluate and returns the report part and all merges
// (costs scaled to N rows).
func wardLeaves(core Points, opt Options, scale float64) (Ward, []Merge) {
	leaves := core
	w := Ward{Source: "coreset"}
	if kf := WardLeaves(core.Len(), opt.MaxK); kf < core.Len() {
		fit := kmeans.Fit(core, kf, kmeans.FitOptions{Restarts: 1, Rand: rngFor(opt.Seed, kf, streamWard)})
		leaves = Points{X: fit.Centres, W: fit.Sizes, D: core.D}
		w.Source = fmt.Sprintf("k-means centroids (k=%d)", kf)
		w.Base = fit.Cost * scale
	}
	merges := WardLinkage(leaves)
	for i := range merges {
		merges[i].Cost *= scale
		merges[i].Size *= scale
	}
	w.Leaves = len(merges) + 1
	top := min(2*opt.MaxK, len(merges))
	w.Merges = append([]Merge(nil), merges[len(merges)-top:]...)
	return w, merges
}
