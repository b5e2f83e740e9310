// Package criteria scores every candidate number of clusters k from a one-pass Summary (moments,
// bounding box, covariance, a weighted coreset, a uniform sample and optional mini-batch centres)
// and lets the criteria vote for a verdict.
//
// Evaluate fits weighted k-means on the coreset for each k and computes: the Kneedle elbow on
// WCSS, the mean silhouette (stratified anchor estimate with a 95% interval) and the simplified
// silhouette, the gap statistic with a bounding-box and a principal-component-box reference,
// BIC/AIC of a full-covariance Gaussian mixture, a dimension-consistent k-means BIC, Ward linkage on the
// centroids of a finer fit, and the Calinski–Harabasz and Davies–Bouldin indices. The individual
// criteria are exported as plain functions (SilhouetteExact, CalinskiHarabasz, DaviesBouldin,
// WardLinkage, Kneedle, GapRule, GMMFit, ...) so they can be checked against reference libraries.
//
// Everything is deterministic for a given Summary and Options.Seed: each k draws from its own
// random stream derived from the seed and k, so results do not depend on Options.Workers.
package criteria
