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
// covariance alone where the points carry it at every k up to maxK, else (mixtureLadder) the full
// and the spherical one, each where the points carry it.
func mixtureFamilies(maxK int, rows float64, points, dims int) []MixtureFamily {
	if mixtureLadder(maxK, rows, points, dims) {
		return []MixtureFamily{FamilyFull, FamilySpherical}
	}
	return []MixtureFamily{FamilyFull}
}

// mixtureLadder reports whether the points cannot carry a full-covariance mixture at maxK
// (mixtureThinAt), so that the mixture criteria also fit the spherical model and score each k by
// the family of lower BIC among those the points carry there. It is decided once for the range,
// and the spherical model is carried wherever the full one is, so every k is scored from the
// same candidates but where the full one is thin (a lost candidate, which favours the smaller k,
// never the larger).
//
// Measured (DEVELOPERS.md, issue 12, tenth round): on Tibshirani's scenario (d), four spherical
// clusters in 10 dimensions on 100 to 200 rows, no full mixture beyond k = 1 could be fitted and
// five k-means criteria merged the two closest clusters (verdict 42 of 50; 47 with the ladder).
// A diagonal model as a third candidate gave 137 grid verdicts right against 138 (on a
// 125-row scenario (d) set it won at k = 3, where the spherical one had 4) and the same
// scenario counts; fitting the candidates at every k of every input, not only where the full
// one is thin, made (b) and (c) 50 of 50 but Unbalance right at 5 of 10 seeds instead of 8, at
// the cost of an extra mixture fit at every k of every run.
func mixtureLadder(maxK int, rows float64, points, dims int) bool {
	return maxK >= 2 && mixtureThinAt(maxK, rows, points, dims)
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
// weighted log-likelihood and classification entropy on the points.
func fitMixture(f MixtureFamily, core Points, fit Fit, reg float64) (ll, entropy float64, err error) {
	opt := GMMOptions{Reg: reg, MaxIter: gmmMaxIter, Tol: gmmTol}
	switch f {
	case FamilyFull:
		_, ll, entropy, _, err = gmmFullFit(core, fit, opt)
		return ll, entropy, err
	case FamilySpherical:
		opt.Spherical = true
		_, ll, entropy, _ = gmmFit(core, fit, opt)
		return ll, entropy, nil
	}
	return 0, 0, fmt.Errorf("criteria: unknown mixture family %q", f)
}
