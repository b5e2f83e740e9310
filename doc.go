// Package kgauge estimates the number of clusters k in data too large for memory.
//
// It wires the three stages together: [stream] turns Parquet and Arrow IPC files into float64 rows,
// [sketch] summarises them in one pass (moments, bounding box, covariance, a weighted coreset, a
// uniform sample and mini-batch k-means for every candidate k), and [criteria] scores every k from
// that summary and votes. [Estimate] runs the whole job on files or saved sketches; [Build] and
// [Evaluate] run its halves, so that a sketch can be saved, merged with others and evaluated later.
//
// # Stages of Estimate
//
//  1. Discover the inputs and open their footers; sort the units (row groups, record batches) in a
//     seeded random order, because lake files are often sorted by a key.
//  2. Probe: read a bounded number of rows from the first units of that order (so spread over the
//     files) to fix the centre and scale that weight rows for the coreset and the starting centres
//     of mini-batch k-means. The probe is separate from the pass; Result.ProbeRows reports its size.
//  3. Pass: every row is read exactly once, by Workers goroutines, each building its own sketch over
//     a fixed round-robin share of the units; the sketches are merged in worker order.
//  4. Scale the summary with the exact statistics of the pass (z-score by default) and evaluate the
//     criteria.
package kgauge
