// Package model predicts what an estimate costs before it runs: its wall time and its peak memory on
// this machine, as a sum of named terms whose constants are measured, never typed in.
//
// # Time
//
//	T = open + probe + pass + criteria
//	open     = files·OpenFile
//	probe    = probe units·OpenUnit + probe bytes/ScanRate + seed rows·Σk·d/KernelRate
//	pass     = PassOverhead·(units·OpenUnit + bytes/ScanRate + rows·d·AddPerValue + fed·Σk·d/KernelRate) / S(W)
//	criteria = CriteriaFixed + work(m, k range, d, B, gap sample, anchors) / (CriteriaRate·CriteriaScaleUp)
//
// where fed = min(rows, mini-batch rows) is the mini-batch feed, Σk the sum of the candidate k, and
// S(W) = 1 / ((1−p) + p/min(W, cores, units)) Amdahl's speed-up with the measured parallel fraction p.
// Criteria work does not grow with the rows: it is fixed by the coreset and the option sizes.
//
// # Memory
//
//	peak = base + W·(sketch + read buffer + d·PageBytes) + probe rows + criteria working set
//
// # Constants
//
// [Default] returns the constants committed in calibration.json, written by
// "go run ./cmd/kgauge-calibrate" from timed runs on generated files; a plan replaces the
// machine-dependent rates by what its short timed probe of the real input measured (see
// [Calibration.WithProbe]). No constant is asserted in a test: the tests check the model's algebra.
package model
