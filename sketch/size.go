package sketch

// Sizes a sketch owns, for the cost model (package cost): what a [Sketch] of a given [Config] and
// width holds once its reservoirs are full. They are computed here, beside the structures they
// describe, so that a change of layout changes the prediction with it (TestHeldBytesMatchesHeap).

// ProbeSeedRows is the most probe rows the starting centres of a [Probe] (Probe.Init) are seeded
// on by k-means++: the probe of package kgauge uses at most this many, and the cost model prices
// the seeding with it.
const ProbeSeedRows = 8192

// reservoirRowBytes is the per-row overhead of a reservoir (topK) beyond the row's values: its
// key (8 bytes), slot index (4) and weight (8).
const reservoirRowBytes = 8 + 4 + 8

// growthSlack is the share of a reservoir's buffers beyond its rows that the model allows for. It
// was append's growth (large slices grow by about 1.25x: half of that unused on average); the
// buffers now double up to exactly the capacity, or are allocated at once where the input's rows
// are known (topK.reserve), so a full reservoir has none, and while the last doubling copies, the
// old half is live beside the new buffer. Kept at append's figure, the model errs high, the safe
// side for --memory (DEVELOPERS.md, issue 15, "Criteria stage, round 13").
const growthSlack = 1.125

// HeldBytes is the memory a sketch of configuration cfg on d columns holds once its coreset and
// sample are full, while it is fed batches of batchRows rows by AddColumns: the two reservoirs,
// the cross products (d×d), the moments, the mini-batch buffer (MiniBatchSize rows), the centres and
// counts of every k and the per-row buffer of a batch. Zero fields of cfg take their defaults.
func HeldBytes(cfg Config, d, batchRows int) int64 {
	cfg = cfg.withDefaults()
	D := int64(d)
	row := D*8 + reservoirRowBytes
	reservoirs := int64(float64(int64(cfg.CoresetSize+1)*row+int64(cfg.SampleSize)*row) * growthSlack)
	sumK := int64(cfg.MaxK+cfg.MinK) * int64(cfg.MaxK-cfg.MinK+1) / 2
	// The rows held for a mini-batch step, probe-scaled and again in the covariance's units (from
	// concurrentCrossFrom columns twice: the feed fills one pair while a flush works on the other),
	// and their labels (one set per goroutine of the steps).
	steps := int64(stepGoroutines(d))
	miniBatch := int64(cfg.MiniBatchSize)*((D+int64(crossStride(d)))*8*steps+4*steps) + sumK*(D+1)*8
	// The assignment's scratch, shared by every k, one per goroutine of the steps: norms, the
	// centres in groups of four (the last filled up) and a padded copy, two dot products per
	// centre, and one row's difference from its centre.
	assigner := steps * ((int64(cfg.MaxK)+3)*(2*D+3)*8 + D*8)
	cross := D*D*8 + D*8
	moments := 6 * D * 8
	buffers := int64(batchRows)*8 + 4*D*8 // norm2, row, probe centre, scale and inverse scale
	return reservoirs + miniBatch + assigner + cross + moments + buffers
}

// SettledBytes is what a settled sketch (after Merge or Encode) adds per merged part: one centre
// set of every k, in raw units, with its counts.
func SettledBytes(cfg Config, d int) int64 {
	cfg = cfg.withDefaults()
	sumK := int64(cfg.MaxK+cfg.MinK) * int64(cfg.MaxK-cfg.MinK+1) / 2
	return sumK * int64(d+1) * 8
}
