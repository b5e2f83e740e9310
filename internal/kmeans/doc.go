// Package kmeans holds the weighted k-means primitives shared by the one-pass sketch and the
// k-selection criteria: the nearest-centre kernel Assign, weighted k-means++ seeding (PlusPlus),
// weighted Lloyd iterations (Lloyd) and a best-of-restarts driver (Fit).
//
// Points are row-major []float64 with a dimension D; weights are optional (nil means 1 for every
// point). All randomness comes from an explicit *rand.Rand (math/rand/v2), so the same input and
// the same generator state give the same output. Nothing here starts goroutines or allocates in
// the hot kernel.
package kmeans
