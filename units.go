package kgauge

import (
	"context"
	"fmt"
	"slices"
	"sync"
	"time"

	"github.com/RoaringBitmap/roaring/v2/roaring64"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/stream"
	_ "github.com/kgauge/kgauge/stream/lake" // Delta Lake and Iceberg tables as inputs
)

// UnitPlan is everything a distributed pass needs, fixed before it starts: the files, the resolved
// columns, every unit (row group, record batch) with its global number, the probe and the sketch
// configuration. It is plain data and round-trips through encoding/json, so a runner can ship it to
// its workers; each worker then builds one partial sketch per unit with [Builder.Build], and the
// partial sketches merge, in any order, into the sketch a single Build would make (exactly for the
// moments, coreset and sample; see [EvaluateMerged] for the mini-batch seeds).
type UnitPlan struct {
	Input   *Input        `json:"input"`
	Files   []stream.File `json:"files"`
	Columns []string      `json:"columns"`
	Units   []PlanUnit    `json:"units"` // Units[i].ID == i: file order, as Build numbers them
	Probe   sketch.Probe  `json:"probe"`
	Sketch  sketch.Config `json:"sketch"`
	Options Options       `json:"options"` // after defaults and the memory fit; Progress is nil
	Timings Timings       `json:"timings"` // open and probe of the planning step
	// Deletes holds, per file of Files, the rows a lake table's deletion vector or delete files
	// drop, as a portable roaring bitmap (nil when none): stream.File.Deleted does not travel
	// through encoding/json, so a worker's [Builder] restores it from here and leaves those rows
	// out, as Build does.
	Deletes [][]byte `json:"deletes,omitempty"`
}

// PlanUnit is one unit of a [UnitPlan].
type PlanUnit struct {
	ID    int   `json:"id"`    // global unit number, the argument of sketch.BeginUnit
	File  int   `json:"file"`  // index into UnitPlan.Files
	Index int   `json:"index"` // row group or record batch within the file
	Rows  int64 `json:"rows"`  // from metadata, -1 when unknown
	Bytes int64 `json:"bytes"` // selected column bytes
}

// PlanUnits does what Build does before its pass: it discovers the files named by paths, reads their
// footers, resolves the columns, numbers the units and runs the probe over the first units of the
// seeded order. The result is a function of the inputs and opt.
func PlanUnits(ctx context.Context, paths []string, opt Options) (*UnitPlan, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	start := time.Now()
	op, err := Open(paths, opt)
	if err != nil {
		return nil, err
	}
	ds := op.Dataset
	defer ds.Close()
	opt = op.Options
	opt.Progress = nil
	p := &UnitPlan{Input: op.Input, Files: slices.Clone(ds.Files), Columns: slices.Clone(ds.Columns)}
	p.Input.Skipped = nil
	for i, f := range p.Files { // the plan travels as JSON, and File.Deleted does not
		if f.Deleted == nil {
			continue
		}
		if p.Deletes == nil {
			p.Deletes = make([][]byte, len(p.Files))
		}
		if p.Deletes[i], err = f.Deleted.ToBytes(); err != nil {
			return nil, fmt.Errorf("kgauge: %s: row deletes: %w", f.Path, err)
		}
	}
	for i, u := range ds.Units {
		p.Units = append(p.Units, PlanUnit{ID: i, File: u.File, Index: u.Index, Rows: u.Rows, Bytes: u.Bytes})
	}
	p.Timings.Open = time.Since(start).Seconds()

	start = time.Now()
	if p.Probe, err = probe(ctx, ds, stream.Shuffle(ds.Units, opt.Seed), opt); err != nil {
		return nil, err
	}
	p.Timings.Probe = time.Since(start).Seconds()
	p.Sketch = opt.Sketch
	p.Sketch.Columns = slices.Clone(ds.Columns)
	p.Sketch.ExpectedRows = ds.Rows
	p.Options = opt
	return p, nil
}

// NewPartial returns an empty sketch for the plan, the identity of merging partial sketches. It does
// not count the probe's rows (EvaluateMerged counts them once).
func (p *UnitPlan) NewPartial() (*sketch.Sketch, error) {
	sk, err := sketch.New(p.Sketch, p.Probe)
	if err != nil {
		return nil, err
	}
	sk.Meta.ProbeRows = 0
	return sk, nil
}

// Builder builds partial sketches of one plan's units. It keeps the footers of the last few files it
// read, so a worker given several units of one file reads that file's footer once. It is safe for
// concurrent use.
type Builder struct {
	plan *UnitPlan

	mu    sync.Mutex
	cache []cachedFile // most recently used last
}

type cachedFile struct {
	file int
	ds   *stream.Dataset
}

// builderCacheFiles is how many files' footers a Builder keeps.
const builderCacheFiles = 4

// NewBuilder returns a Builder for plan.
func NewBuilder(plan *UnitPlan) *Builder { return &Builder{plan: plan} }

// Build reads unit id of the plan and returns its partial sketch: a sketch holding exactly the rows
// of that unit, with the unit's random keys (sketch.BeginUnit(id)) and its skipped rows.
func (b *Builder) Build(ctx context.Context, id int) (*sketch.Sketch, error) {
	p := b.plan
	if id < 0 || id >= len(p.Units) {
		return nil, fmt.Errorf("kgauge: unit %d is not in the plan (%d units)", id, len(p.Units))
	}
	u := p.Units[id]
	ds, err := b.dataset(u.File)
	if err != nil {
		return nil, err
	}
	if u.Index >= len(ds.Units) || ds.Units[u.Index].Rows != u.Rows {
		return nil, &InputError{Path: p.Files[u.File].Path,
			Err: fmt.Errorf("changed since the plan was made (unit %d)", u.Index)}
	}
	sk, err := p.NewPartial()
	if err != nil {
		return nil, err
	}
	if err := readUnit(ctx, ds, ds.Units[u.Index], id, sk, p.Options.BatchRows, nil, nil); err != nil {
		return nil, err
	}
	return sk, nil
}

// dataset returns the opened footer of plan file i, from the cache when it is there.
func (b *Builder) dataset(i int) (*stream.Dataset, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	for j, c := range b.cache {
		if c.file == i {
			b.cache = append(append(b.cache[:j:j], b.cache[j+1:]...), c)
			return c.ds, nil
		}
	}
	if i < 0 || i >= len(b.plan.Files) {
		return nil, fmt.Errorf("kgauge: file %d is not in the plan (%d files)", i, len(b.plan.Files))
	}
	f := b.plan.Files[i]
	if i < len(b.plan.Deletes) && b.plan.Deletes[i] != nil {
		f.Deleted = roaring64.New()
		if err := f.Deleted.UnmarshalBinary(b.plan.Deletes[i]); err != nil {
			return nil, &InputError{Path: f.Path, Err: fmt.Errorf("row deletes in the plan: %w", err)}
		}
	} else {
		f.Deleted = nil // a plan decoded from JSON holds an empty bitmap here
	}
	ds, err := stream.Open([]stream.File{f}, stream.Options{Columns: b.plan.Columns})
	if err != nil {
		return nil, err
	}
	if len(b.cache) == builderCacheFiles {
		// Not closed: another goroutine may still be reading a unit of it (a Dataset holds no open
		// files, only footers, which the collector reclaims).
		b.cache = b.cache[1:]
	}
	b.cache = append(b.cache, cachedFile{file: i, ds: ds})
	return ds, nil
}

// BuildUnit builds the partial sketch of one unit of plan; see [Builder.Build].
func BuildUnit(ctx context.Context, plan *UnitPlan, id int) (*sketch.Sketch, error) {
	return NewBuilder(plan).Build(ctx, id)
}

// EvaluateMerged runs the criteria on the merge of every unit's partial sketch of plan and returns
// the same Result as Estimate on the plan's inputs; pass is the wall time of the distributed pass.
// The moments, coreset, sample and skipped rows equal Estimate's (the moments up to rounding); the
// mini-batch seeds pool one centre set per unit instead of one per worker, so scores that depend on
// the k-means fits may differ slightly.
func EvaluateMerged(ctx context.Context, plan *UnitPlan, sk *sketch.Sketch, pass time.Duration) (*Result, error) {
	sk.Meta.Sources = sk.Meta.Sources[:0]
	for _, f := range plan.Files {
		sk.Meta.Sources = append(sk.Meta.Sources, f.Path)
	}
	sk.Meta.ProbeRows = plan.Probe.Rows
	if sk.Rows() == 0 {
		return nil, fmt.Errorf("%w in %d file(s) (%d skipped for null or NaN values)", ErrNoRows, len(plan.Files), sk.Meta.SkippedRows)
	}
	r, err := Evaluate(ctx, sk, plan.Options)
	if err != nil {
		return nil, err
	}
	crit := r.Timings.Criteria
	r.Timings = plan.Timings
	r.Timings.Pass = pass.Seconds()
	r.Timings.Criteria = crit
	r.Files = orEmpty(plan.Input.Files)
	r.Ignored = orEmpty(plan.Input.Ignored)
	r.Tables = orEmpty(plan.Input.Tables)
	return r, nil
}
