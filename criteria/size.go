package criteria

import "math"

// Sizes Evaluate owns, for the cost model (package cost). They sit beside the code they describe so
// that a change of Evaluate changes the prediction with it (TestWorkingBytesMatchesHeap).

// WardDirectMax is the largest coreset Evaluate agglomerates directly by Ward linkage; larger
// coresets are first reduced to the centroids of a finer k-means fit (WardLeaves).
const WardDirectMax = wardDirectMax

// WardLeaves is the number of leaves of Evaluate's Ward linkage on a coreset of m points with
// candidates up to maxK: the coreset itself up to WardDirectMax points, otherwise the centroids of
// a k-means fit with max(3 maxK, 50) centres (or the coreset, if that is not fewer).
func WardLeaves(m, maxK int) int {
	if kf := wardFineK(maxK); m > wardDirectMax && kf < m {
		return kf
	}
	return m
}

// wardFineK is the number of centres of the fit that reduces a large coreset before Ward linkage.
func wardFineK(maxK int) int { return max(3*maxK, 50) }

// evaluateFixedBytes is what Evaluate holds whatever the sizes, before its fits start: the dip
// statistic's null tables of sizes not stored in dipNullTable, the vote's weights and gonum's
// workspaces. Measured (when every null table was simulated in the run): the peak of
// Evaluate on 1,000 to 6,000 points of 4 columns with 3 k and one gap reference was 1.7 to 2.1 MiB
// (linux/amd64, Go 1.26); TestWorkingBytesMatchesHeap checks the whole sum.
const evaluateFixedBytes = 2 << 20

// WorkingBytes is the peak memory Evaluate holds beyond its Summary, for a coreset of m points, a
// uniform sample of n points (0: none, the gap and check points are then drawn from the coreset)
// on d columns, with opt (zero fields take their defaults) and workers goroutines across k:
//
//   - the gap statistic's data side and its 2·GapRefs reference sets (box and principal-component
//     box) of min(GapSample, n) points each;
//   - the check points of the one-mode check and the split halves (up to checkPoints) and their
//     whitened copy;
//   - the width terms: copies of the d×d covariance, the eigenvectors and the workspace of the
//     eigen decompositions (principal-component box, whitening);
//   - the fits of every k (labels of the m points, centres);
//   - per worker, one k at a time: Lloyd's bounds and labels (or k-means++'s distances, one
//     buffer per candidate, whichever is larger), the full-covariance mixture at the
//     largest k it is fitted for (k covariances, their copies, Cholesky factors of d×d and the
//     factors' copy in groups of four for lanes.Solve4; no k whose mixture has fewer than two
//     of the m points per parameter is fitted, see mixtureThinAt), the responsibilities of m
//     points at the largest k any mixture family is fitted for (mixtureFamilies), and the full
//     mixture's lists of the points each component holds (heldPoints: at most m indexes of 4
//     bytes per component);
//   - the Ward linkage's distance matrix over its leaves (WardLeaves).
func WorkingBytes(opt Options, m, n, d, workers int) int64 {
	opt = opt.withDefaults()
	pool := n
	if pool <= 0 {
		pool = m
	}
	D := int64(d)
	g := int64(min(opt.GapSample, pool))
	c := int64(min(checkPoints, pool))
	nk := int64(opt.MaxK - opt.MinK + 1)
	sumK := int64(opt.MaxK+opt.MinK) * nk / 2
	M := int64(m)
	refs := int64(1+2*opt.GapRefs) * g * D * 8
	checks := 2 * c * D * 8
	width := 6 * D * D * 8
	fits := nk*M*4 + sumK*D*8
	fams := mixtureFamilies(opt.MaxK, math.Inf(1), m, d)
	kFull := int64(mixtureTopK(opt.MinK, opt.MaxK, m, d, FamilyFull))
	kAny := int64(mixtureTopK(opt.MinK, opt.MaxK, m, d, fams[len(fams)-1]))
	seeding := int64(2+int(math.Log(float64(opt.MaxK)))+1)*8 + 4 // k-means++: d2 and one buffer per candidate, near
	perWorker := M*max(4*8+4, seeding) + 3*kFull*D*D*8 + (kFull+3)/4*4*D*D*8 + M*kAny*8 + M*kFull*4
	leaves := int64(WardLeaves(m, opt.MaxK))
	ward := leaves * leaves * 8
	w := int64(max(1, min(workers, int(nk))))
	// The fixed part is transient (the one-mode check's null tables are built before the fits), so it
	// overlaps the fits rather than adding to them.
	return refs + checks + width + max(evaluateFixedBytes, fits+w*perWorker+ward)
}

// mixtureTopK is the largest k in minK..maxK whose mixture of family f Evaluate fits on m
// coreset points in d dimensions (k = 1 always is).
func mixtureTopK(minK, maxK, m, d int, f MixtureFamily) int {
	top := 1
	for k := max(2, minK); k <= maxK && !familyThinAt(f, k, math.Inf(1), m, d); k++ {
		top = k
	}
	return top
}
