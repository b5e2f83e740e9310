// Package sketch builds kgauge's one-pass, mergeable summary of a data set.
//
// A [Sketch] is fed row-major float64 batches in the data's raw units and keeps, in memory that does not
// grow with the row count:
//
//   - the exact row count, per-column shifted sums and sums of squares (mean and variance), and the
//     bounding box;
//   - the cross-product matrix of a uniform Bernoulli sample of the rows (the covariance used for the
//     principal-component reference box of the gap statistic);
//   - a weighted coreset for k-means (see below);
//   - a uniform sample of fixed size (bottom-m of independent uniform keys);
//   - mini-batch k-means state (Sculley 2010, "Web-scale k-means clustering") for every k in range,
//     fed by the same Bernoulli sample of rows in mini-batches.
//
// # The coreset
//
// The coreset is a lightweight coreset (Bachem, Lucic & Krause 2018, "Scalable k-means clustering via
// lightweight coresets") drawn by priority sampling (Duffield, Lund & Thorup 2007, "Priority sampling
// for estimation of arbitrary subset sums"). The lightweight construction samples a point x with
// probability proportional to
//
//	q(x) = 1/2 · 1/n  +  1/2 · d(x, μ)² / Σ d(x', μ)²
//
// which needs μ, n and Σ d² before the first draw, i.e. two passes. Here μ and the scale come from a
// short probe of randomly chosen units read before the pass (see the root package), so the per-row
// importance is fixed in advance:
//
//	w(x) = c + ‖z‖²,   z = (x − μ̂) / σ̂,   c = mean of ‖z‖² over the probe
//
// (c plays the role of Σd²/n, so the two halves of q carry about equal mass). Each row draws u ~ U(0,1]
// and gets priority w/u; the sketch keeps the m+1 rows of largest priority. With τ the (m+1)-th
// priority, the m kept rows with weight max(1, τ/w) give unbiased estimates of any sum over all rows,
// in particular of the k-means cost of any set of centres, and of n itself. We chose this over
// merge-and-reduce (StreamKM++) because it needs one pass, its merge is exact (the union of two
// priority samples, cut back to the m+1 largest priorities, is the priority sample of the union), its
// error does not compound over merge levels, and like the lightweight coreset it keeps small distant
// clusters that a uniform sample misses (their rows have large ‖z‖²).
//
// # Determinism
//
// The random keys of a row depend only on the seed, the number of the unit (row group or batch) it came
// from, as given to [Sketch.BeginUnit], and its position in that unit. So the coreset and the uniform
// sample depend on the input and the seed, not on how units were spread over workers or in what order
// they were merged. The mini-batch centres also depend on the order of rows within each sketch; they are
// only starting points for the k-means fits on the coreset. Moments are exact up to floating-point
// summation order.
//
// A Sketch is not safe for concurrent use: parallel work is one sketch per worker, then [Sketch.Merge].
package sketch
