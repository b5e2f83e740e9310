package criteria

import (
	"errors"
	"fmt"
)

// Options controls Evaluate. DefaultOptions gives the values used when a field is zero.
type Options struct {
	MinK        int    `json:"min_k"`        // candidate range MinK..MaxK; default 1..20
	MaxK        int    `json:"max_k"`        // default 20
	Restarts    int    `json:"restarts"`     // k-means++ seedings per k on the coreset beside the Summary's seed centres and the sweeps (more where cheap); default 1
	Anchors     int    `json:"anchors"`      // silhouette anchors, stratified by cluster; default 1000
	GapRefs     int    `json:"gap_refs"`     // B Monte Carlo reference sets per reference; default 5 (bench/report/DEFAULTS.md)
	GapSample   int    `json:"gap_sample"`   // points per gap reference set and on the data side; default 2000
	GapRestarts int    `json:"gap_restarts"` // k-means++ restarts of the gap fits (the data side at every k, each reference set at the ends of the k range); default 1
	Workers     int    `json:"-"`            // goroutines across k; 0 = GOMAXPROCS. Results do not depend on it
	SkipWard    bool   `json:"-"`            // skip the Ward linkage (its vote abstains); for timing the per-k work alone
	Seed        uint64 `json:"seed"`         // seed of every random stream (DefaultOptions: 1; 0 is a valid seed)
	// Progress, when not nil, is called by Evaluate as its units of work finish (the restarts
	// and sweeps of each k's fit, each gap reference path, each k's scores), with done and total
	// in units of expected work (weighted by each unit's expected cost, so done/total grows
	// about evenly with time). Calls never overlap (they come from Evaluate's goroutines one at a
	// time), done never decreases and never exceeds total, total stays the same, and a
	// successful Evaluate makes a last call with done == total. It must return quickly and must
	// not call Evaluate. It does not change the result.
	Progress func(done, total float64) `json:"-"`
}

// DefaultOptions returns MinK 1, MaxK 20, Restarts 1, Anchors 1000, GapRefs 5, GapSample 2000,
// Workers 0 (GOMAXPROCS) and Seed 1.
func DefaultOptions() Options {
	return Options{MinK: 1, MaxK: 20, Restarts: 1, Anchors: 1000, GapRefs: 5, GapSample: 2000, GapRestarts: 1, Seed: 1}
}

// withDefaults replaces zero fields by DefaultOptions' values.
func (o Options) withDefaults() Options {
	d := DefaultOptions()
	if o.MinK == 0 {
		o.MinK = d.MinK
	}
	if o.MaxK == 0 {
		o.MaxK = d.MaxK
	}
	if o.Restarts == 0 {
		o.Restarts = d.Restarts
	}
	if o.Anchors == 0 {
		o.Anchors = d.Anchors
	}
	if o.GapRefs == 0 {
		o.GapRefs = d.GapRefs
	}
	if o.GapRestarts == 0 {
		o.GapRestarts = d.GapRestarts
	}
	if o.GapSample == 0 {
		o.GapSample = d.GapSample
	}
	return o
}

// Validate reports the first bad option as a one-line error naming it. Zero fields are valid
// (they mean the default).
func (o Options) Validate() error {
	o = o.withDefaults()
	switch {
	case o.MinK < 1:
		return fmt.Errorf("criteria: min-k (%d) must be >= 1", o.MinK)
	case o.MaxK < o.MinK:
		return fmt.Errorf("criteria: max-k (%d) < min-k (%d)", o.MaxK, o.MinK)
	case o.MaxK > 10000:
		return fmt.Errorf("criteria: max-k (%d) must be <= 10000", o.MaxK)
	case o.Restarts < 0:
		return fmt.Errorf("criteria: restarts (%d) must be >= 0", o.Restarts)
	case o.Anchors < 0:
		return fmt.Errorf("criteria: anchors (%d) must be >= 0", o.Anchors)
	case o.GapRefs < 0:
		return fmt.Errorf("criteria: gap-refs (%d) must be >= 0", o.GapRefs)
	case o.GapSample < 0:
		return fmt.Errorf("criteria: gap-sample (%d) must be >= 0", o.GapSample)
	case o.GapRestarts < 0:
		return fmt.Errorf("criteria: gap-restarts (%d) must be >= 0", o.GapRestarts)
	case o.Workers < 0:
		return fmt.Errorf("criteria: workers (%d) must be >= 0", o.Workers)
	}
	return nil
}

// ErrBadSummary is wrapped by Evaluate's error for an inconsistent Summary.
var ErrBadSummary = errors.New("criteria: bad summary")

func errf(format string, args ...any) error {
	return fmt.Errorf("%w: %s", ErrBadSummary, fmt.Sprintf(format, args...))
}
