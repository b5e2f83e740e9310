package kgauge

import (
	"math"
	"sync/atomic"
)

// Stage names a step of an estimate, as Progress reports it.
type Stage string

// The stages of an estimate, in order. A run from saved sketches goes from StageOpen to
// StageCriteria.
const (
	StageOpen     Stage = "open"     // finding the files, reading footers and schemas
	StageProbe    Stage = "probe"    // reading the first rows for the pass's scale and centres
	StagePass     Stage = "pass"     // the one pass over every row
	StageCriteria Stage = "criteria" // scoring every k from the merged sketch
	StageDone     Stage = "done"
)

// Progress is updated by Build and Estimate as they work, for a caller that shows progress. Its
// fields and methods may be used from another goroutine at any time.
type Progress struct {
	TotalRows  atomic.Int64 // rows expected, from the files' metadata (0 when unknown)
	TotalBytes atomic.Int64 // bytes of the selected columns, from the metadata
	Rows       atomic.Int64 // rows read so far by the pass
	Bytes      atomic.Int64 // bytes of the units completed so far

	stage  atomic.Value  // Stage
	scored atomic.Uint64 // math.Float64bits of the criteria stage's share done
}

// Stage returns the stage the run is in ("" before it starts).
func (p *Progress) Stage() Stage {
	s, _ := p.stage.Load().(Stage)
	return s
}

// CriteriaShare returns the share of the criteria stage's work done, from 0 to 1: the criteria's
// work units are weighted by their expected cost, so the share moves evenly with time.
func (p *Progress) CriteriaShare() float64 {
	return math.Float64frombits(p.scored.Load())
}

func (p *Progress) setStage(s Stage) {
	if p != nil {
		p.stage.Store(s)
	}
}

// scoredShare records done out of total units of the criteria stage's work. Concurrent calls may
// arrive out of order; the share never goes back.
func (p *Progress) scoredShare(done, total float64) {
	if p == nil || !(total > 0) {
		return
	}
	f := math.Min(math.Max(done/total, 0), 1)
	for {
		old := p.scored.Load()
		if math.Float64frombits(old) >= f || p.scored.CompareAndSwap(old, math.Float64bits(f)) {
			return
		}
	}
}
