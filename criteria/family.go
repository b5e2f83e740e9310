package criteria

import "fmt"

// MixtureFamily names the covariance model of a Gaussian mixture component.
type MixtureFamily string

// The covariance models the mixture criteria fit, richest first.
const (
	FamilyFull      MixtureFamily = "full"      // one full covariance matrix per component
	FamilySpherical MixtureFamily = "spherical" // one variance per component
)

// Params returns the number of free parameters of a k-component mixture of the family in d
// dimensions.
func (f MixtureFamily) Params(k, d int) int {
	if f == FamilySpherical {
		return GMMSphericalParams(k, d)
	}
	return GMMFullParams(k, d)
}

// adjective describes the family in a vote's note ("full-covariance Gaussian mixture").
func (f MixtureFamily) adjective() string {
	if f == FamilyFull {
		return "full-covariance"
	}
	return string(f)
}

// mixtureFamilies lists the families the mixture criteria compare at every k: the full
// covariance alone where the points are plenty for it at maxK, else (mixtureLadder) the full and
// the spherical one, each where the points carry it (familyThinAt).
func mixtureFamilies(maxK int, rows float64, points, dims int) []MixtureFamily {
	if mixtureLadder(maxK, rows, points, dims) {
		return []MixtureFamily{FamilyFull, FamilySpherical}
	}
	return []MixtureFamily{FamilyFull}
}

// mixtureLadder reports whether the points the mixture is fitted on (seenPoints) are fewer than
// rowsPerParam (ten, the rule of thumb bic_gmm's k = 1 rule uses) per parameter of a
// full-covariance mixture at maxK, so that the mixture criteria also fit the spherical model and
// score each k by the family of lower BIC among those the points carry there (two points per
// parameter, familyThinAt). It is decided once for the range, and the spherical model is carried
// wherever the full one is, so every k is scored from the same candidates but where the full one
// is thin (a lost candidate, which favours the smaller k, never the larger; and a minimum the full
// model gives next to where it turns thin has no say, see votes). At the default coreset (16,384
// points) and max-k 20 it is on from 12 columns.
//
// Measured (DEVELOPERS.md, issue 12, tenth round): on Tibshirani's scenario (d), four spherical
// clusters in 10 dimensions on 100 to 200 rows, no full mixture beyond k = 1 could be fitted and
// five k-means criteria merged the two closest clusters (verdict 42 of 50; 47 with the ladder); in
// (c), four clusters in 3 dimensions, a full mixture on 125 rows merged two of them where the
// spherical one, fitted beside it, does not (48 of 50; 50). Switching it on only where the full
// model is thin at maxK (two points per parameter) left (b) and (c) at 49 and 47; on every input
// (with a diagonal candidate too), Unbalance fell to 5 of 10 seeds from 8. A diagonal model as a
// third candidate gave 137 grid verdicts right against 138 (on a 125-row scenario (d) set it won
// at k = 3, where the spherical one had 4). It costs the spherical EM at every k: 3% of the
// criteria stage at 16 columns.
func mixtureLadder(maxK int, rows float64, points, dims int) bool {
	n, _ := seenPoints(rows, points)
	return maxK >= 2 && n < rowsPerParam*float64(GMMFullParams(maxK, dims))
}

// familyThinAt reports whether a k-component mixture of family f (k >= 2) has fewer than
// rowsPerParamAtK distinct points per parameter (seenPoints).
func familyThinAt(f MixtureFamily, k int, rows float64, points, dims int) bool {
	n, _ := seenPoints(rows, points)
	return n < rowsPerParamAtK*float64(f.Params(k, dims))
}

// mixturePassedOver reports whether the mixture criteria pass k over: k >= 2 and no family they
// compare (mixtureFamilies) is carried by the points there. cheapest is the family whose
// parameter count decides it.
func mixturePassedOver(k, maxK int, rows float64, points, dims int) (over bool, cheapest MixtureFamily) {
	fams := mixtureFamilies(maxK, rows, points, dims)
	cheapest = fams[len(fams)-1]
	return k >= 2 && familyThinAt(cheapest, k, rows, points, dims), cheapest
}

// fitMixture fits a mixture of family f to the points by EM from the k-means fit and returns its
// weighted log-likelihood and classification entropy on the points. resp, when not nil, is the
// responsibilities' buffer, reused from one fit to the next. stop, when not nil, is asked before
// each EM iteration (and once after a spherical fit): once it reports true the fit ends with
// errEMStopped.
func fitMixture(f MixtureFamily, core Points, fit Fit, reg float64, resp *[]float64, stop func() bool) (ll, entropy float64, err error) {
	opt := GMMOptions{Reg: reg, MaxIter: gmmMaxIter, Tol: gmmTol, resp: resp, stop: stop}
	switch f {
	case FamilyFull:
		_, ll, entropy, _, err = gmmFullFit(core, fit, opt)
		return ll, entropy, err
	case FamilySpherical:
		opt.Spherical = true
		_, ll, entropy, _ = gmmFit(core, fit, opt)
		if stop != nil && stop() {
			return ll, entropy, errEMStopped
		}
		return ll, entropy, nil
	}
	return 0, 0, fmt.Errorf("criteria: unknown mixture family %q", f)
}
