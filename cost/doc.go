// Package cost predicts what an estimate costs before it runs: its wall time and its peak memory on
// this machine, as a sum of named terms whose constants are measured, never typed in.
//
// # Time
//
//	T = open + probe + pass + criteria
//	open     = files·OpenFile
//	probe    = probe units·OpenUnit + ProbeOverhead·(probe bytes/ScanRate + seed rows·Σk·d/KernelRate)
//	pass     = (PassOverhead·(units·OpenUnit + bytes/ScanRate + rows·d·AddPerValue) + FeedOverhead·fed·Σk·d/KernelRate) / S(W)
//	criteria = setup + makespan(Ward job, job of k = MaxK … MinK; cores)    from the probe's runs
//	criteria = the same from the calibration's runs at the widths around d, × (d/d₁)^e   without a probe
//
// where fed = min(rows, mini-batch rows) is the mini-batch feed, Σk the sum of the candidate k, and
// S(W) = 1 / ((1−p) + p/min(W, cores, units)) Amdahl's speed-up with the measured parallel fraction p.
// The two pass overheads are fitted from passes over two sizes of one file shape: the part that
// grows with the data and the part that does not (the capped feed, the final merge). The criteria
// do not grow with the rows: they are fixed by the coreset and the option sizes.
//
// With a probe the criteria are priced from what they cost on this input (CriteriaFromRuns): a plan
// runs them at the estimate's option sizes on a sketch of the probe rows for k = 1 (with and without
// the Ward linkage), the smallest k ≥ 2, the middle and the largest k, and interpolates the others.
// A k's cost is not a constant times its work units: Lloyd and EM iterations depend on how k compares
// with the clusters in the data (flat below them, growing beyond), and the silhouette's share of a
// k's cost falls as k grows; both change with the column count and the k range, which is why a
// small run scaled by one factor missed by a third at 8 and 32 columns.
//
// Without a probe (plan --no-probe, the progress bar's first ETA, the report's planned column) the
// calibration's criteria runs take their place: the same runs, timed by kgauge-calibrate at several
// column counts and k = 1 … 40 on generated files, each set priced as above and the stage at d
// interpolated between the two widths around it as a power of d ([CriteriaFromWidths]). A work
// count linear in d·Σk, fitted on one shape, had missed by −54% at k = 1..40 and −37% at 8 columns.
//
// # Memory
//
//	peak = base + (1 + GOGC/100)·max(probe rows, W·(sketch + read buffer + d·PageBytes), criteria stage)
//
// [PredictMemory] is the one memory model: plan prints it, --memory is checked against it, the
// projection and Beam's per-worker figure ([BeamWorkerBytes]) use it. The sizes come from the
// packages that own them: sketch.HeldBytes, criteria.WorkingBytes, sketch.ProbeSeedRows,
// criteria.WardLeaves; each is tested there against the heap it measures.
//
// # Constants
//
// [Default] returns the constants committed in calibration.json, written by
// "go run ./cmd/kgauge-calibrate" from timed runs on generated files; a plan replaces the
// machine-dependent rates by what its short timed probe of the real input measured (see
// capacity.TimedProbe and [ProbeTiming]). No constant is asserted in a test: the tests check the model's algebra.
package cost
