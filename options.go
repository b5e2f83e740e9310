package kgauge

import (
	"fmt"
	"runtime"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/stream"
)

// Scale says how features are put on a common footing before distances are taken.
type Scale string

// The scalings. All use the exact statistics of the whole input, known after the pass.
const (
	ZScore Scale = "zscore" // (x − mean) / standard deviation; a constant column is only centred
	Range  Scale = "range"  // (x − min) / (max − min); a constant column is only shifted
	Raw    Scale = "none"   // the data's own units
	Log    Scale = "log"    // (ln x − mean ln x) / sd ln x, every value must be > 0 (skew.go)
	// Auto is zscore, except that a positive right-skewed column whose logarithm is close to
	// symmetric is taken as Log takes it (skew.go, autoLogs).
	Auto Scale = "auto"
)

// ParseScale turns a flag value into a Scale.
func ParseScale(s string) (Scale, error) {
	switch Scale(s) {
	case ZScore, Range, Raw, Log, Auto:
		return Scale(s), nil
	}
	return "", fmt.Errorf("unknown scale %q (want auto, zscore, range, log or none)", s)
}

// Defaults for [Options].
const (
	DefaultBatchRows  = 4096
	DefaultProbeRows  = 65536
	DefaultProbeUnits = 16
	// probeInitRows caps the probe rows used for k-means++ starting centres.
	probeInitRows = sketch.ProbeSeedRows
)

// Options configures Build, Evaluate and Estimate. Zero fields take their defaults.
type Options struct {
	Columns    []string // feature columns; nil means every numeric column
	Scale      Scale
	Workers    int // goroutines for the pass; 0 means the number of CPUs
	BatchRows  int // rows per read batch
	ProbeRows  int // rows the probe reads at most before the pass
	ProbeUnits int // units the probe spreads over at least (when there are that many)
	Sketch     sketch.Config
	Criteria   criteria.Options
	// Seed seeds every random choice of the run: the probe's order and centres, the sketch
	// (Sketch.Seed) and the criteria (Criteria.Seed), which take it whatever they hold. 0 means
	// the default, 1, as for every other zero field.
	Seed   uint64
	Memory int64 // bytes the run may hold at most (cost.PredictMemory); 0 means no limit
	// SkipUnreadable leaves out data files that cannot be read (permissions, a dangling link, a
	// truncated or damaged file or footer) and lists them in the result, instead of failing.
	SkipUnreadable bool
	Progress       *Progress // optional; updated as rows are read
	// AfterPass, when not nil, is called once by Estimate between the pass and the criteria (when
	// a pass ran). The library changes no process-wide state; cmd/kgauge returns the pass's memory
	// to the system here (DEVELOPERS.md, measured design decisions).
	AfterPass func() `json:"-"`
	// Tables says how Delta Lake and Apache Iceberg tables among the inputs are read: their
	// latest state by default, a version or snapshot, files only, a partition filter.
	Tables stream.DiscoverOptions
	// Reduce says in how many dimensions the criteria run for a wide input (sketch/reduce): 0
	// projects an input of more than reduce.Above columns to reduce.Dims dimensions, −1 never
	// reduces, m ≥ 2 projects an input of more than m columns to m dimensions.
	Reduce int
}

// DefaultOptions returns the options used for zero fields.
func DefaultOptions() Options {
	return Options{Scale: Auto, Workers: runtime.NumCPU(), BatchRows: DefaultBatchRows,
		ProbeRows: DefaultProbeRows, ProbeUnits: DefaultProbeUnits,
		Sketch: sketch.Config{CoresetSize: sketch.DefaultCoresetSize, SampleSize: sketch.DefaultSampleSize,
			MiniBatchSize: sketch.DefaultMiniBatchSize, MiniBatchRows: sketch.DefaultMiniBatchRows},
		Criteria: criteria.DefaultOptions(), Seed: 1}
}

// withDefaults fills zero fields and copies the shared k range and seed into the stage options.
func (o Options) withDefaults() Options {
	def := DefaultOptions()
	if o.Scale == "" {
		o.Scale = def.Scale
	}
	if o.Workers == 0 {
		o.Workers = def.Workers
	}
	if o.BatchRows == 0 {
		o.BatchRows = def.BatchRows
	}
	if o.ProbeRows == 0 {
		o.ProbeRows = def.ProbeRows
	}
	if o.ProbeUnits == 0 {
		o.ProbeUnits = def.ProbeUnits
	}
	c := o.Criteria
	dc := def.Criteria
	fill := func(v *int, d int) {
		if *v == 0 {
			*v = d
		}
	}
	fill(&c.MinK, dc.MinK)
	fill(&c.MaxK, dc.MaxK)
	fill(&c.Restarts, dc.Restarts)
	fill(&c.Anchors, dc.Anchors)
	fill(&c.GapRefs, dc.GapRefs)
	fill(&c.GapSample, dc.GapSample)
	fill(&c.GapRestarts, dc.GapRestarts)
	fill(&o.Sketch.CoresetSize, def.Sketch.CoresetSize)
	fill(&o.Sketch.SampleSize, def.Sketch.SampleSize)
	fill(&o.Sketch.MiniBatchSize, def.Sketch.MiniBatchSize)
	if o.Sketch.MiniBatchRows == 0 {
		o.Sketch.MiniBatchRows = def.Sketch.MiniBatchRows
	}
	if o.Seed == 0 {
		o.Seed = def.Seed
	}
	c.Seed = o.Seed
	o.Criteria = c
	o.Sketch.MinK, o.Sketch.MaxK = c.MinK, c.MaxK
	o.Sketch.Seed = o.Seed
	return o
}

// Validate reports the first out-of-range option, naming it as the command-line flag does.
func (o Options) Validate() error {
	o = o.withDefaults()
	if _, err := ParseScale(string(o.Scale)); err != nil {
		return err
	}
	switch {
	case o.Workers < 1:
		return fmt.Errorf("workers must be at least 1, got %d", o.Workers)
	case o.BatchRows < 1:
		return fmt.Errorf("batch rows must be positive, got %d", o.BatchRows)
	case o.ProbeRows < 1:
		return fmt.Errorf("probe rows must be positive, got %d", o.ProbeRows)
	case o.Memory < 0:
		return fmt.Errorf("memory limit must not be negative, got %d", o.Memory)
	case o.ProbeUnits < 1:
		return fmt.Errorf("probe units must be positive, got %d", o.ProbeUnits)
	case o.Reduce < -1 || o.Reduce == 1:
		return fmt.Errorf("reduce must be -1 (off), 0 (automatic) or at least 2 dimensions, got %d", o.Reduce)
	}
	if err := o.Criteria.Validate(); err != nil {
		return err
	}
	cfg := o.Sketch
	cfg.Columns = []string{"x"}
	return cfg.Validate()
}
