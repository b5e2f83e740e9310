package kgauge

import (
	"errors"
	"runtime"

	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/stream"
)

// Throughput is what the pass of an estimate achieved.
type Throughput struct {
	Workers        int     `json:"workers"`
	PassSeconds    float64 `json:"pass_seconds"`
	RowsPerSecond  float64 `json:"rows_per_second"`
	BytesPerSecond float64 `json:"bytes_per_second"` // unit bytes (compressed column chunks) per second
	Bytes          int64   `json:"bytes"`
}

// PlanWorkload opens the footers of the data files named by paths and describes the estimate opt
// would run on them, without reading any rows: the options after the same caps and the same
// --memory fit as Estimate's (capToInput, fitMemory), so that the progress bar's first figure,
// the report's planned column and plan --no-probe price the same run.
func PlanWorkload(paths []string, opt Options) (cost.Workload, error) {
	opt = opt.withDefaults()
	_, data, err := splitInputs(paths)
	if err != nil {
		return cost.Workload{}, err
	}
	if len(data) == 0 {
		return cost.Workload{}, errors.New("plan: only saved sketches given; nothing to read")
	}
	op, err := Open(data, opt)
	if err != nil {
		return cost.Workload{}, err
	}
	defer op.Dataset.Close()
	return WorkloadOf(op.Dataset, op.Options), nil
}

// WorkloadOf describes the estimate opt would run on the opened dataset ds.
func WorkloadOf(ds *stream.Dataset, opt Options) cost.Workload {
	opt = opt.withDefaults()
	c := opt.Criteria
	s := opt.Sketch
	cs, ss := s.CoresetSize, s.SampleSize
	if cs == 0 {
		cs = sketch.DefaultCoresetSize
	}
	if ss == 0 {
		ss = sketch.DefaultSampleSize
	}
	mb := s.MiniBatchRows
	if mb == 0 {
		mb = sketch.DefaultMiniBatchRows
	}
	dc := criteria.DefaultOptions()
	pick := func(v, def int) int {
		if v == 0 {
			return def
		}
		return v
	}
	critDims, _ := reducedDims(ds.Dims(), opt)
	return cost.Workload{Files: len(ds.Files), Units: len(ds.Units), Rows: ds.Rows, Bytes: ds.Bytes,
		Dims: ds.Dims(), Workers: opt.Workers, Cores: runtime.GOMAXPROCS(0), MinK: c.MinK, MaxK: c.MaxK,
		Coreset: cs, Sample: ss, MiniBatchRows: mb, BatchRows: opt.BatchRows, ProbeRows: opt.ProbeRows,
		ProbeUnits: opt.ProbeUnits, Restarts: pick(c.Restarts, dc.Restarts), Anchors: pick(c.Anchors, dc.Anchors),
		GapRefs: pick(c.GapRefs, dc.GapRefs), GapSample: pick(c.GapSample, dc.GapSample),
		GapRestarts:   pick(c.GapRestarts, dc.GapRestarts),
		WardLeaves:    criteria.WardLeaves(int(min(int64(cs), max(ds.Rows, 1))), c.MaxK),
		MiniBatchSize: s.MiniBatchSize, CriteriaWorkers: c.Workers, CriteriaDims: critDims}
}
