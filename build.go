package kgauge

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"sync"
	"time"

	"github.com/kgauge/kgauge/internal/kmeans"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/stream"
)

// Input describes what a sketch was built from.
type Input struct {
	Files   []FileInfo      `json:"files"`
	Columns []string        `json:"columns"`
	Types   []string        `json:"column_types,omitempty"`
	Ignored []IgnoredColumn `json:"ignored_columns"`
	Units   int             `json:"units"`
	Bytes   int64           `json:"bytes"`
	// Skipped are the data files left out as unreadable (Options.SkipUnreadable).
	Skipped []SkippedFile `json:"skipped_files,omitempty"`
	Tables  []TableInfo   `json:"tables,omitempty"` // the lake tables read through their metadata
}

// TableInfo is one Delta Lake or Apache Iceberg table (or a partition folder of one) among the
// inputs.
type TableInfo struct {
	Format string `json:"format"` // "delta" or "iceberg"
	Root   string `json:"root"`
	Path   string `json:"path"` // the folder named: the root or a partition folder inside it
	// Version is the Delta table version read; Snapshot the Iceberg snapshot id.
	Version  *int64 `json:"version,omitempty"`
	Snapshot *int64 `json:"snapshot,omitempty"`
	// LiveFiles are the data files of that state (after --where) read; PresentFiles the Parquet
	// data files stored below Path, removed ones included.
	LiveFiles    int    `json:"live_files"`
	PresentFiles int    `json:"present_files"`
	DeletedRows  int64  `json:"deleted_rows"` // rows of the live files its deletion vectors or delete files drop
	Where        string `json:"where,omitempty"`
}

func describeTables(tables []*stream.Table, where []stream.KeyValue) []TableInfo {
	var out []TableInfo
	for _, t := range tables {
		ti := TableInfo{Format: t.Format, Root: t.Root, Path: t.Path, LiveFiles: t.Live,
			PresentFiles: t.Present, DeletedRows: t.DeletedRows, Where: stream.WhereString(where)}
		v := t.Version
		if t.Format == "iceberg" {
			ti.Snapshot = &v
		} else {
			ti.Version = &v
		}
		out = append(out, ti)
	}
	return out
}

// FileInfo is one input file.
type FileInfo struct {
	Path      string            `json:"path"`
	Format    string            `json:"format"`
	Bytes     int64             `json:"bytes"`
	Partition map[string]string `json:"partition,omitempty"`
}

// IgnoredColumn is a column that is not a feature, with the reason.
type IgnoredColumn struct {
	Name   string `json:"name"`
	Type   string `json:"type"`
	Reason string `json:"reason"`
}

// Timings are wall-clock seconds of the stages.
type Timings struct {
	Open     float64 `json:"open_seconds"`
	Probe    float64 `json:"probe_seconds"`
	Pass     float64 `json:"pass_seconds"`
	Criteria float64 `json:"criteria_seconds"`
}

// ErrInternal marks a failure no input or option should cause (a recovered panic): a bug.
var ErrInternal = errors.New("kgauge: internal error")

// ErrNoRows is returned when the inputs hold no usable row.
var ErrNoRows = errors.New("kgauge: no usable rows")

// Build discovers and opens the data files named by paths (files, directories, globs), probes them,
// and reads every row once into a sketch. The returned Input describes the files and columns. A
// data file that cannot be read is an error, or with opt.SkipUnreadable is left out and listed in
// Input.Skipped. The sketch records the content identity of every file read (Meta.ContentIDs).
func Build(ctx context.Context, paths []string, opt Options) (*sketch.Sketch, *Input, Timings, error) {
	return build(ctx, paths, opt, nil, nil)
}

// build is Build that fails, before the pass, when a data file is one a sketch in avoid (content
// identity → sketch path) was built from. A non-nil found is the discovery of paths already made.
func build(ctx context.Context, paths []string, opt Options, avoid map[string]string, found *discovered) (*sketch.Sketch, *Input, Timings, error) {
	var tm Timings
	if err := opt.Validate(); err != nil {
		return nil, nil, tm, err
	}
	opt = opt.withDefaults()
	start := time.Now()
	opt.Progress.setStage(StageOpen)
	var ids []string
	op, err := open(paths, opt, found, func(files []stream.File) (err error) {
		ids, err = contentIDs(files, avoid)
		return err
	})
	if err != nil {
		return nil, nil, tm, err
	}
	ds, in := op.Dataset, op.Input
	defer ds.Close()
	opt = op.Options
	if p := opt.Progress; p != nil {
		p.TotalRows.Store(ds.Rows)
		p.TotalBytes.Store(ds.Bytes)
	}
	tm.Open = time.Since(start).Seconds()

	start = time.Now()
	opt.Progress.setStage(StageProbe)
	units := stream.Shuffle(ds.Units, opt.Seed)
	unitID := make(map[stream.Unit]int, len(ds.Units))
	for i, u := range ds.Units {
		unitID[u] = i
	}
	pr, err := probe(ctx, ds, units, opt)
	if err != nil {
		return nil, nil, tm, err
	}
	tm.Probe = time.Since(start).Seconds()

	start = time.Now()
	opt.Progress.setStage(StagePass)
	cfg := opt.Sketch
	cfg.Columns = ds.Columns
	cfg.ExpectedRows = expectedRows(ds)
	nulls := make([]int64, ds.Dims())
	sk, err := pass(ctx, ds, units, unitID, cfg, pr, opt, nulls)
	if err != nil {
		return nil, nil, tm, err
	}
	tm.Pass = time.Since(start).Seconds()
	for _, f := range ds.Files {
		sk.Meta.Sources = append(sk.Meta.Sources, f.Path)
	}
	sk.Meta.ContentIDs = ids
	sk.Meta.ProbeRows = pr.Rows
	if opt.Scale == Raw {
		if err := checkRawSketch(sk); err != nil {
			return nil, nil, tm, err
		}
	}
	if sk.Rows() == 0 {
		return nil, nil, tm, fmt.Errorf("%w in %d file(s) (%d skipped for null or NaN values%s)", ErrNoRows,
			len(ds.Files), sk.Meta.SkippedRows, blame(ds.Columns, nulls, sk.Meta.SkippedRows))
	}
	return sk, in, tm, nil
}

// capToInput caps the read batch, which is allocated whole, by the largest unit the footers
// describe (a batch never spans units, so no batch changes), and refuses a k range larger than
// the rows they state before anything is probed. An input without rows is left to the pass, which
// reports "no usable rows".
func (o Options) capToInput(ds *stream.Dataset) (Options, error) {
	known := true
	var largest int64
	for _, u := range ds.Units {
		if u.Rows < 0 {
			known = false
			break
		}
		largest = max(largest, u.Rows)
	}
	if !known {
		return o, nil
	}
	if ds.Rows > 0 && ds.Rows < int64(o.Criteria.MaxK) {
		return o, fmt.Errorf("%w: the input holds %d rows, fewer than max-k (%d)", ErrTooFewRows, ds.Rows, o.Criteria.MaxK)
	}
	o.BatchRows = int(min(int64(o.BatchRows), max(1, largest)))
	return o, nil
}

// blame names the columns that were null or NaN in every skipped row.
func blame(columns []string, nulls []int64, skipped int64) string {
	if skipped == 0 {
		return ""
	}
	var names []string
	for j, c := range nulls {
		if c == skipped {
			names = append(names, fmt.Sprintf("%q", columns[j]))
		}
	}
	if len(names) == 0 {
		return ""
	}
	return "; null or NaN in every one of them: column " + strings.Join(names, ", ")
}

// expectedRows is the metadata's row count plus, for units that do not state theirs (Arrow IPC),
// an estimate from their size at 8 bytes per feature value. It only sets the rate at which rows
// feed mini-batch k-means, so an estimate does.
func expectedRows(ds *stream.Dataset) int64 {
	n := ds.Rows
	for _, u := range ds.Units {
		if u.Rows < 0 {
			n += max(1, u.Bytes/int64(8*ds.Dims()))
		}
	}
	return n
}

func describe(ds *stream.Dataset) *Input {
	in := &Input{Columns: ds.Columns, Types: ds.Types, Units: len(ds.Units), Bytes: ds.Bytes,
		Ignored: []IgnoredColumn{}}
	for _, f := range ds.Files {
		fi := FileInfo{Path: f.Path, Format: f.Format.String(), Bytes: f.Size}
		if len(f.Partition) > 0 {
			fi.Partition = map[string]string{}
			for _, kv := range f.Partition {
				fi.Partition[kv.Key] = kv.Value
			}
		}
		in.Files = append(in.Files, fi)
	}
	for _, c := range ds.Ignored {
		in.Ignored = append(in.Ignored, IgnoredColumn{Name: c.Name, Type: c.Type, Reason: c.Reason})
	}
	return in
}

// probe reads up to opt.ProbeRows rows from the first units of the shuffled order, at most
// ceil(ProbeRows/ProbeUnits) from each, and derives the pass's scale and starting centres from them.
// The first ProbeUnits units are read by up to opt.Workers goroutines at once, each into its own
// slot of one slice, so the rows and the probe do not depend on the workers and the probe holds
// its rows once; further units are read one after the other, only while the rows are fewer than
// 2 MaxK.
func probe(ctx context.Context, ds *stream.Dataset, units []stream.Unit, opt Options) (sketch.Probe, error) {
	d := ds.Dims()
	perUnit := (opt.ProbeRows + opt.ProbeUnits - 1) / opt.ProbeUnits
	minRows := 2 * opt.Criteria.MaxK
	first := min(len(units), opt.ProbeUnits)
	slot := perUnit * d
	rows := make([]float64, first*slot)
	got := make([]int, first)
	errs := make([]error, first)
	next := make(chan int)
	var wg sync.WaitGroup
	for range min(opt.Workers, first) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				got[i], errs[i] = probeUnit(ctx, ds, units[i], rows[i*slot:(i+1)*slot], opt.BatchRows)
			}
		}()
	}
	for i := range first {
		next <- i
	}
	close(next)
	wg.Wait()
	n := 0 // rows kept, moved down over the slots' unused ends
	for i := range first {
		if errs[i] != nil {
			return sketch.Probe{}, errs[i]
		}
		m := min(got[i], opt.ProbeRows-n)
		copy(rows[n*d:], rows[i*slot:i*slot+m*d])
		n += m
	}
	rows = rows[:n*d]
	for _, u := range units[first:] {
		if n >= opt.ProbeRows || n >= minRows {
			break
		}
		want := min(perUnit, opt.ProbeRows-n)
		rows = slices.Grow(rows, want*d)
		m, err := probeUnit(ctx, ds, u, rows[n*d:(n+want)*d], opt.BatchRows)
		if err != nil {
			return sketch.Probe{}, err
		}
		n += m
		rows = rows[:n*d]
	}
	return ProbeFromRows(rows, ds.Columns, opt)
}

// probeUnit fills dst (row-major) with the first rows of unit u, at most batch rows a read, and
// returns how many rows it holds (fewer than dst has room for when the unit is shorter).
func probeUnit(ctx context.Context, ds *stream.Dataset, u stream.Unit, dst []float64, batch int) (int, error) {
	if err := ctx.Err(); err != nil {
		return 0, err
	}
	r, err := ds.OpenUnit(u)
	if err != nil {
		return 0, err
	}
	defer r.Close()
	d := ds.Dims()
	got := 0
	for want := len(dst) / d; got < want; {
		m, err := r.Read(dst[got*d : min(want, got+batch)*d])
		got += m
		if err == io.EOF {
			break
		}
		if err != nil {
			return 0, err
		}
	}
	return got, nil
}

// ProbeFromRows derives the pass's scale and starting centres from the probe's rows (row-major, raw
// units; not modified): each column's mean and spread, the mean squared scaled norm, and for every
// k the first k centres of one k-means++ seeding for MaxK on the first probeInitRows scaled rows
// (k-means++ is sequential, so they are a k-means++ seeding for k). The estimate's probe and the
// capacity planner's timed probe both use it, so the planner times the sketch and the criteria from
// the centres the estimate would start from.
func ProbeFromRows(rows []float64, cols []string, opt Options) (sketch.Probe, error) {
	d := len(cols)
	n := len(rows) / d
	p := sketch.Probe{Center: make([]float64, d), Scale: make([]float64, d), Init: map[int][]float64{}, Rows: int64(n)}
	if n == 0 {
		// Nothing usable: the pass will find no rows either and report it.
		for j := range p.Scale {
			p.Scale[j] = 1
		}
		for k := opt.Criteria.MinK; k <= opt.Criteria.MaxK; k++ {
			p.Init[k] = make([]float64, k*d)
		}
		return p, nil
	}
	col := make([]float64, n)
	lo, hi := make([]float64, d), make([]float64, d)
	for j := range d {
		lo[j], hi[j] = math.Inf(1), math.Inf(-1)
		for i := range n {
			v := rows[i*d+j]
			col[i] = v
			lo[j], hi[j] = min(lo[j], v), max(hi[j], v)
		}
		p.Center[j], p.Scale[j] = meanStd(col)
		if opt.Scale == Raw {
			// The data's own geometry (scale 1), around the probe's mean so that the coreset's
			// weights measure spread, not the distance from the origin.
			p.Scale[j] = 1
		}
		if !(p.Scale[j] > 0) || math.IsInf(p.Scale[j], 0) {
			p.Scale[j] = 1
		}
	}
	if opt.Scale == Raw {
		if err := checkRaw(cols, lo, hi); err != nil {
			return sketch.Probe{}, err
		}
	}
	m := min(n, probeInitRows)
	initRows := make([]float64, m*d)
	for i := range n {
		var s float64
		for j := range d {
			z := (rows[i*d+j] - p.Center[j]) / p.Scale[j]
			if math.IsInf(z, 0) { // a difference beyond float64: scale both terms first
				z = rows[i*d+j]/p.Scale[j] - p.Center[j]/p.Scale[j]
			}
			if i < m {
				initRows[i*d+j] = z
			}
			s += z * z
		}
		p.MeanSq += s
	}
	p.MeanSq /= float64(n)
	data := kmeans.Data{X: initRows, D: d}
	// k-means++ picks its centres one after the other, so the first k centres of one seeding for
	// MaxK are a k-means++ seeding for k (with MaxK's number of greedy candidates): one seeding
	// serves every k. Seeding each k on its own was 72% of the probe's time (issue 15).
	all := startCentres(data, opt.Criteria.MaxK, rand.New(rand.NewPCG(opt.Seed, uint64(opt.Criteria.MaxK))))
	for k := opt.Criteria.MinK; k <= opt.Criteria.MaxK; k++ {
		p.Init[k] = slices.Clone(all[:k*d])
	}
	return p, nil
}

// startCentres seeds k centres by k-means++ on the probe rows; with fewer rows than k the rows are
// repeated, so that the centres exist and mini-batch k-means can still run.
func startCentres(p kmeans.Data, k int, rng *rand.Rand) []float64 {
	if p.Len() >= k {
		return kmeans.PlusPlus(p, k, rng, nil)
	}
	c := make([]float64, 0, k*p.D)
	for i := 0; len(c) < k*p.D; i++ {
		c = append(c, p.Point(i%p.Len())...)
	}
	return c
}

// pass reads every unit once with opt.Workers goroutines. Worker w takes units w, w+W, w+2W, … of the
// shuffled order, so each worker's sketch is a function of the input, the seed and W; the worker
// sketches are merged in worker order.
func pass(ctx context.Context, ds *stream.Dataset, units []stream.Unit, unitID map[stream.Unit]int,
	cfg sketch.Config, pr sketch.Probe, opt Options, nulls []int64) (*sketch.Sketch, error) {
	workers := min(opt.Workers, max(1, len(units)))
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	sketches := make([]*sketch.Sketch, workers)
	perWorker := make([][]int64, workers)
	errs := make([]error, workers)
	var wg sync.WaitGroup
	for w := range workers {
		sk, err := sketch.New(cfg, pr)
		if err != nil {
			return nil, err
		}
		sketches[w] = sk
		perWorker[w] = make([]int64, ds.Dims())
		wg.Add(1)
		go func() {
			defer wg.Done()
			defer func() {
				// A panic here is a bug; it must end the run with an error, not a stack trace.
				if p := recover(); p != nil {
					errs[w] = fmt.Errorf("%w: worker %d: %v", ErrInternal, w, p)
					cancel()
				}
			}()
			if err := work(ctx, ds, units, unitID, w, workers, sk, opt, perWorker[w]); err != nil {
				errs[w] = err
				cancel()
			}
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil && !errors.Is(err, context.Canceled) {
			return nil, err
		}
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	for _, counts := range perWorker {
		for j, c := range counts {
			nulls[j] += c
		}
	}
	total := sketches[0]
	for _, sk := range sketches[1:] {
		if err := total.Merge(sk); err != nil {
			return nil, err
		}
	}
	return total, nil
}

// work reads worker w's units by column (stream.UnitReader.ReadColumns, which hands float64 pages over
// without copying) and adds them with sketch.AddColumns; DEVELOPERS.md records what this saves over
// row-major batches.
func work(ctx context.Context, ds *stream.Dataset, units []stream.Unit, unitID map[stream.Unit]int,
	w, workers int, sk *sketch.Sketch, opt Options, nulls []int64) error {
	for i := w; i < len(units); i += workers {
		if err := readUnit(ctx, ds, units[i], unitID[units[i]], sk, opt.BatchRows, opt.Progress, nulls); err != nil {
			return err
		}
	}
	return nil
}

// readUnit is the one read loop of a pass, shared by Estimate's workers and Beam's work items
// (Builder.Build): it opens unit u of ds, keys its rows by id (sketch.BeginUnit), reads it by
// column in batches of at most batchRows rows into sk, and counts its skipped rows in sk and per
// column in nulls (when not nil) and its rows and bytes in progress (when not nil). It checks ctx
// before opening and after every batch.
func readUnit(ctx context.Context, ds *stream.Dataset, u stream.Unit, id int, sk *sketch.Sketch,
	batchRows int, progress *Progress, nulls []int64) error {
	if err := ctx.Err(); err != nil {
		return err
	}
	r, err := ds.OpenUnit(u)
	if err != nil {
		return err
	}
	sk.BeginUnit(id)
	for {
		cols, err := r.ReadColumns(max(1, batchRows))
		if err == io.EOF {
			break
		}
		if err != nil {
			r.Close()
			return err
		}
		sk.AddColumns(cols)
		if progress != nil {
			progress.Rows.Add(int64(len(cols[0])))
		}
		if err := ctx.Err(); err != nil {
			r.Close()
			return err
		}
	}
	sk.Meta.SkippedRows += r.Skipped()
	if nulls != nil {
		for j, c := range r.SkippedByColumn() {
			nulls[j] += c
		}
	}
	if err := r.Close(); err != nil {
		return err
	}
	if progress != nil {
		progress.Bytes.Add(u.Bytes)
	}
	return nil
}
