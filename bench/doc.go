// Package bench measures what kgauge's approximations cost in accuracy and keeps the evidence the
// defaults are chosen from.
//
// [RunAccuracy] runs seeded workloads with a known number of clusters (the demo scenario and
// Gaussian mixtures of bench/synth, and the published reference sets) through the same sketch and
// criteria code as the kgauge command, in memory, and compares every approximation with its exact
// counterpart on all rows:
//
//   - silhouette: the stratified anchor estimate (criteria.SilhouetteAnchors) against the exact
//     O(n²) mean silhouette of the same labels, and how often its 95% interval covers the exact value;
//   - coreset: the coreset's WCSS and BIC against the full data's for the same centres, and the excess
//     full-data cost of centres fitted on the coreset over centres fitted on all rows, beside a
//     uniform sample of the same size;
//   - gap statistic: Gap(k) and the chosen k at each reference size and B against a large run;
//   - verdict: how often the verdict from the sketch differs from the verdict from all rows.
//
// [WriteAccuracyReport] writes the Markdown report, CSV tables and PNG plots. Every random choice
// comes from a math/rand/v2 source seeded from the workload, the experiment and the repeat, so a
// run is a function of its [AccuracyConfig]; work is spread over goroutines and collected by index,
// so the result does not depend on their number.
package bench
