// Package synth generates seeded data sets with a known number of clusters k.
//
// Two generators are provided:
//
//   - [WriteLoads] and [Loads] produce the demo scenario of the project (household
//     electricity load profiles in a utility's lake, one row per meter per day, partitioned
//     by day; see shared/SCENARIO.md). Each household follows one of six usage archetypes,
//     plus a seventh (afternoon air-conditioning) on a heat-wave day.
//   - [WriteMixture] and [Mixture] produce Gaussian mixtures for benchmarks and property tests:
//     k clusters in d dimensions with a chosen separation, shares, elongation and column
//     scales. WriteMixture streams, so files of tens of millions of rows can be written
//     without holding them in memory.
//
// # Determinism
//
// Output depends only on the options. Every row draws its random numbers from its own
// math/rand/v2 PCG source seeded from (Seed, row) (and the partition for loads), so rows
// can be produced independently, in any chunking, and the same options give byte-identical
// files. The values of a mixture do not depend on Format, Compression or RowGroup; the
// values of a household do not depend on Order (Sorted and Shuffled files hold the same
// rows in another order).
//
// # Concurrency
//
// WriteLoads and WriteMixture generate rows on one extra goroutine, at most two pieces of
// 32,768 rows ahead of the writer, and stop it before they return. All functions are safe
// to call concurrently with different paths.
//
// # Files
//
// Files are written to a temporary name in the target directory and renamed into place,
// so a reader never sees a half-written file.
package synth
