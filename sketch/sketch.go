package sketch

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sync"
	"sync/atomic"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// Defaults for [Config]; the benchmark report under bench/ records what each size costs and buys.
const (
	DefaultCoresetSize   = 16384
	DefaultSampleSize    = 4096
	DefaultMiniBatchSize = 1024
	DefaultMiniBatchRows = 1 << 17
	DefaultMinK          = 1
	DefaultMaxK          = 20
	// unknownRowsRate is the Bernoulli rate of the mini-batch feed when the row count is not known in
	// advance (Arrow IPC streams).
	unknownRowsRate = 1.0 / 16
)

// Config sets what a [Sketch] keeps. The zero value of a field means its default.
type Config struct {
	Columns       []string // feature names, in row order; their count is the row width
	MinK, MaxK    int      // mini-batch k-means is kept for every k in MinK..MaxK
	CoresetSize   int      // rows in the coreset (m)
	SampleSize    int      // rows in the uniform sample
	MiniBatchSize int      // rows per mini-batch step
	MiniBatchRows int64    // rows fed to mini-batch k-means (and the covariance) over the whole input
	ExpectedRows  int64    // rows in the whole input, when known; sets the feed's sampling rate
	Seed          uint64
}

// withDefaults returns c with zero fields set to their defaults.
func (c Config) withDefaults() Config {
	if c.MinK == 0 {
		c.MinK = DefaultMinK
	}
	if c.MaxK == 0 {
		c.MaxK = DefaultMaxK
	}
	if c.CoresetSize == 0 {
		c.CoresetSize = DefaultCoresetSize
	}
	if c.SampleSize == 0 {
		c.SampleSize = DefaultSampleSize
	}
	if c.MiniBatchSize == 0 {
		c.MiniBatchSize = DefaultMiniBatchSize
	}
	if c.MiniBatchRows == 0 {
		c.MiniBatchRows = DefaultMiniBatchRows
	}
	return c
}

// Validate reports the first out-of-range field, naming it.
func (c Config) Validate() error {
	c = c.withDefaults()
	switch {
	case len(c.Columns) == 0:
		return errors.New("sketch: no columns")
	case c.MinK < 1:
		return fmt.Errorf("sketch: min-k must be at least 1, got %d", c.MinK)
	case c.MaxK < c.MinK:
		return fmt.Errorf("sketch: max-k (%d) is less than min-k (%d)", c.MaxK, c.MinK)
	case c.CoresetSize < 2*c.MaxK:
		return fmt.Errorf("sketch: coreset size %d is too small for max-k %d (need at least %d)", c.CoresetSize, c.MaxK, 2*c.MaxK)
	case c.SampleSize < 2:
		return fmt.Errorf("sketch: sample size must be at least 2, got %d", c.SampleSize)
	case c.MiniBatchSize < 1:
		return fmt.Errorf("sketch: mini-batch size must be positive, got %d", c.MiniBatchSize)
	case c.MiniBatchRows < 1:
		return fmt.Errorf("sketch: mini-batch rows must be positive, got %d", c.MiniBatchRows)
	case c.ExpectedRows < 0:
		return fmt.Errorf("sketch: expected rows must not be negative, got %d", c.ExpectedRows)
	}
	return nil
}

// Probe is what a short look at the data, taken before the pass, fixes for the whole pass: the centre
// and scale that define the space in which rows are weighted for the coreset and clustered by
// mini-batch k-means, the mean squared norm of scaled probe rows, and the mini-batch starting centres.
type Probe struct {
	Center, Scale []float64         // raw units; Scale entries must be > 0
	MeanSq        float64           // mean ‖(x−Center)/Scale‖² over the probe rows
	Init          map[int][]float64 // k → k×d starting centres in the scaled space
	Rows          int64             // rows the probe read (recorded by the caller in Meta.ProbeRows)
}

// Meta records where a sketch's rows came from. It travels with the sketch through [Sketch.Merge]
// and its file format.
type Meta struct {
	Sources     []string // data files (or sketch files) summarised, in order
	SkippedRows int64    // rows skipped for a null or NaN in a feature column
	ProbeRows   int64    // rows read by the probes before the pass
	// ContentIDs identify the contents of the data files summarised (stream.ContentID), so that
	// a sketch is never merged with the data it was built from, nor twice. Empty for a sketch
	// file of format version 1.
	ContentIDs []string
}

// Sketch is the one-pass summary described in the package doc. It depends only on the seed, the
// rows, and the unit numbers given to BeginUnit, except for the mini-batch centres, which also depend
// on the order of units within the sketch.
type Sketch struct {
	cfg   Config
	d     int
	Meta  Meta
	mom   Moments
	cross Cross

	probeCentre []float64
	inv         []float64 // 1/Scale
	scale       []float64 // the probe's Scale
	meanSq      float64

	coreset *topK // priority sample: key w/u, payload w
	sample  *topK // uniform: key −u

	rate   float64
	mb     []*miniBatch // active, probe space, index k−MinK
	parts  [][]CentreSet
	mbBuf  []float64 // rows fed but not yet given to mini-batch k-means, probe-scaled
	dxBuf  []float64 // the same rows shifted and in units, for the covariance estimate, dxLd apart
	dxLd   int
	mbRows int
	// crossRows is how many of the buffered rows are already in the covariance estimate (Cross
	// adds them without running the mini-batch step early).
	crossRows int
	// steps holds the mini-batch assignment's scratch (labels and kmeans.Assigner), shared by
	// every k: one, and from concurrentCrossFrom columns a second for flush's other goroutine.
	steps []stepScratch
	// From concurrentCrossFrom columns a full buffer is worked on behind the feed
	// (flushBehind): spareMB and spareDX are the other pair of buffers, which the feed fills
	// meanwhile, and behind counts the work running (busy while it may).
	spareMB, spareDX []float64
	behind           sync.WaitGroup
	busy             bool

	// Buffers of AddColumns and Add.
	norm2    []float64   // per row of a batch, Σ_j (x_j − shift_j)² / scale_j²
	row      []float64   // one gathered row
	colBuf   []float64   // Add: addChunk rows by column
	colViews [][]float64 // Add: the columns in colBuf

	rng  rand.PCG
	skip int64 // rows to pass before the next one fed to mini-batch k-means
}

// New returns an empty sketch. It checks cfg and probe once; problems are errors naming the field.
func New(cfg Config, probe Probe) (*Sketch, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	cfg = cfg.withDefaults()
	cfg.Columns = slices.Clone(cfg.Columns)
	d := len(cfg.Columns)
	if len(probe.Center) != d || len(probe.Scale) != d {
		return nil, fmt.Errorf("sketch: probe has %d centre and %d scale values for %d columns", len(probe.Center), len(probe.Scale), d)
	}
	unit := make([]float64, d)
	for j, sc := range probe.Scale {
		unit[j] = UnitOf(sc)
	}
	s := &Sketch{cfg: cfg, d: d, mom: newMoments(probe.Center, unit), cross: newCross(probe.Center, unit),
		probeCentre: slices.Clone(probe.Center), inv: make([]float64, d), scale: slices.Clone(probe.Scale),
		meanSq:  probe.MeanSq,
		coreset: newTopK(cfg.CoresetSize+1, d, cfg.ExpectedRows), sample: newTopK(cfg.SampleSize, d, cfg.ExpectedRows),
		mbBuf: make([]float64, cfg.MiniBatchSize*d), steps: make([]stepScratch, stepGoroutines(d)),
		dxBuf: make([]float64, cfg.MiniBatchSize*crossStride(d)), dxLd: crossStride(d),
		row: make([]float64, d), parts: make([][]CentreSet, cfg.MaxK-cfg.MinK+1)}
	for j, sc := range probe.Scale {
		if !(sc > 0) || math.IsInf(sc, 0) {
			return nil, fmt.Errorf("sketch: probe scale of column %q is %v, want a positive finite number", cfg.Columns[j], sc)
		}
		if math.IsNaN(probe.Center[j]) || math.IsInf(probe.Center[j], 0) {
			return nil, fmt.Errorf("sketch: probe centre of column %q is %v, want a finite number", cfg.Columns[j], probe.Center[j])
		}
		s.inv[j] = 1 / sc
	}
	if !(s.meanSq > 0) {
		s.meanSq = float64(d)
	}
	s.rate = unknownRowsRate
	if cfg.ExpectedRows > 0 {
		s.rate = math.Min(1, float64(cfg.MiniBatchRows)/float64(cfg.ExpectedRows))
	}
	for i := range s.steps {
		s.steps[i].labels = make([]int32, cfg.MiniBatchSize)
	}
	for k := cfg.MinK; k <= cfg.MaxK; k++ {
		init, ok := probe.Init[k]
		if !ok || len(init) != k*d {
			return nil, fmt.Errorf("sketch: probe has no %d starting centres for k=%d", k, k)
		}
		s.mb = append(s.mb, &miniBatch{k: k, centres: slices.Clone(init), counts: make([]float64, k)})
	}
	s.BeginUnit(0)
	return s, nil
}

// Dims reports the row width.
func (s *Sketch) Dims() int { return s.d }

// Columns returns the feature names.
func (s *Sketch) Columns() []string { return slices.Clone(s.cfg.Columns) }

// Config returns the configuration the sketch was made with, defaults filled in.
func (s *Sketch) Config() Config { c := s.cfg; c.Columns = slices.Clone(c.Columns); return c }

// Rows reports how many rows were added.
func (s *Sketch) Rows() int64 { return s.mom.N }

// Moments returns a copy of the exact column summaries.
func (s *Sketch) Moments() Moments {
	m := s.mom
	m.Shift, m.Unit, m.S1, m.S2 = slices.Clone(m.Shift), slices.Clone(m.Unit), slices.Clone(m.S1), slices.Clone(m.S2)
	m.Min, m.Max = slices.Clone(m.Min), slices.Clone(m.Max)
	return m
}

// Cross returns a copy of the sampled cross-product summary.
func (s *Sketch) Cross() Cross {
	s.wait()
	s.addCross()
	c := s.cross
	c.Shift, c.Unit, c.S1, c.C = slices.Clone(c.Shift), slices.Clone(c.Unit), slices.Clone(c.S1), slices.Clone(c.C)
	return c
}

// BeginUnit restarts the random keys for the rows of unit u (a row group, a record batch): the keys of
// a unit's rows depend only on the seed, u and the row's position in the unit.
func (s *Sketch) BeginUnit(u int) {
	s.rng.Seed(s.cfg.Seed^0x6b67617567652d73, uint64(u)*0x9e3779b97f4a7c15+1)
	s.skip = s.nextSkip()
}

// uniform returns a draw from (0, 1].
func (s *Sketch) uniform() float64 {
	return (float64(s.rng.Uint64()>>11) + 1) * (1.0 / (1 << 53))
}

// nextSkip draws the number of rows to pass before the next row fed to mini-batch k-means
// (geometric with the feed's rate), so the feed costs one draw per fed row rather than per row.
func (s *Sketch) nextSkip() int64 {
	if s.rate >= 1 {
		return 0
	}
	g := math.Floor(math.Log(s.uniform()) / math.Log1p(-s.rate))
	if g > 1<<62 {
		return 1 << 62
	}
	return int64(g)
}

// addChunk is how many rows Add turns into columns at a time; colStride spaces the columns in its
// buffer so that they do not start at multiples of 4 KiB, which would map them to the same cache sets.
const (
	addChunk  = 1024
	colStride = addChunk + 8
)

// Add adds the rows of batch (row-major, raw units, len a multiple of Dims) and does not modify it.
// It turns them into columns a chunk at a time and adds those with [Sketch.AddColumns], so both give
// the same sketch for the same rows in the same chunks. It does not allocate in steady state.
func (s *Sketch) Add(batch []float64) {
	d := s.d
	if len(batch)%d != 0 {
		panic(fmt.Sprintf("sketch: batch of %d values is not a whole number of %d-column rows", len(batch), d))
	}
	if s.colBuf == nil {
		s.colBuf = make([]float64, colStride*d)
		s.colViews = make([][]float64, d)
	}
	n := len(batch) / d
	for start := 0; start < n; start += addChunk {
		m := min(addChunk, n-start)
		cols := s.colViews
		for j := range cols {
			cols[j] = s.colBuf[j*colStride : j*colStride+m]
		}
		rows := batch[start*d : (start+m)*d]
		for i := range m {
			for j, v := range rows[i*d : i*d+d] {
				cols[j][i] = v
			}
		}
		s.AddColumns(cols)
	}
}

// AddColumns adds rows given by column: cols[j] holds column j's values (raw units), every slice of
// the same length. It neither modifies nor keeps cols, so they may alias a decoder's memory. The
// moments are accumulated column by column over contiguous values; the per-row work is two random
// keys and, for the rare row a reservoir or the mini-batch feed takes, gathering the row. It does not
// allocate in steady state.
func (s *Sketch) AddColumns(cols [][]float64) {
	d := s.d
	if len(cols) != d {
		panic(fmt.Sprintf("sketch: %d columns for a %d-column sketch", len(cols), d))
	}
	n := len(cols[0])
	for _, c := range cols {
		if len(c) != n {
			panic(fmt.Sprintf("sketch: columns of %d and %d values", n, len(c)))
		}
	}
	if n == 0 {
		return
	}
	if cap(s.norm2) < n {
		s.norm2 = make([]float64, n)
	}
	norm2 := s.norm2[:n]
	for j, col := range cols {
		r := s.scale[j] / s.mom.Unit[j] // exact, so 1/r² is 1/scale² times unit², bit for bit
		s.mom.addColumn(j, col, 1/(r*r), norm2)
	}
	sample, coreset, meanSq := s.sample, s.coreset, s.meanSq
	for i, q := range norm2 {
		// Uniform sample: keep the smallest keys u, i.e. the largest −u.
		if u := s.uniform(); !sample.full() || -u > sample.min() {
			sample.offer(-u, s.gather(cols, i), 1)
		}
		// Coreset: priority w/u with w = c + ‖z‖².
		w := meanSq + q
		if p := w / s.uniform(); !coreset.full() || p > coreset.min() {
			coreset.offer(p, s.gather(cols, i), w)
		}
		if s.skip > 0 {
			s.skip--
			continue
		}
		s.feed(s.gather(cols, i))
		s.skip = s.nextSkip()
	}
	s.mom.N += int64(n)
}

// gather copies row i of cols into the sketch's row scratch and returns it.
func (s *Sketch) gather(cols [][]float64, i int) []float64 {
	row := s.row
	for j, c := range cols {
		row[j] = c[i]
	}
	return row
}

// feed buffers one row for the covariance estimate and the mini-batch step.
func (s *Sketch) feed(x []float64) {
	d := s.d
	dx := s.dxBuf[s.mbRows*s.dxLd : s.mbRows*s.dxLd+d]
	z := s.mbBuf[s.mbRows*d : (s.mbRows+1)*d]
	for j, v := range x {
		u := s.cross.Unit[j] // a power of two: the divisions are exact
		dx[j] = v/u - s.cross.Shift[j]/u
		z[j] = (v - s.probeCentre[j]) * s.inv[j]
	}
	s.mbRows++
	if s.mbRows == s.cfg.MiniBatchSize {
		if len(s.steps) > 1 {
			s.flushBehind()
		} else {
			s.flush()
		}
	}
}

// flushBehind hands the full buffers to a flush on goroutines of their own and lets the feed go
// on in the spare pair, once the flush before has finished: the steps and cross-products still run
// one buffer after another, in the rows' order, so the bits are those of flush, and the worker
// reads and gathers the next rows meanwhile. Every reader of the mini-batch state or the
// cross-products waits for it first (wait).
func (s *Sketch) flushBehind() {
	s.wait()
	if s.spareMB == nil {
		s.spareMB, s.spareDX = make([]float64, len(s.mbBuf)), make([]float64, len(s.dxBuf))
	}
	mb, dx, rows, crossRows := s.mbBuf, s.dxBuf, s.mbRows, s.crossRows
	s.mbBuf, s.dxBuf, s.spareMB, s.spareDX = s.spareMB, s.spareDX, mb, dx
	s.mbRows, s.crossRows = 0, 0
	s.busy = true
	s.behind.Go(func() { s.flushShared(mb, dx, rows, crossRows) })
}

// wait returns once no flush runs behind the feed.
func (s *Sketch) wait() {
	if s.busy {
		s.behind.Wait()
		s.busy = false
	}
}

// concurrentCrossFrom is the width from which flush works on two goroutines. Per row at k =
// 1..20 (BenchmarkCrossAdd, and the mini-batch steps alone): 16 columns 0.09 against 1.2 µs, 64
// columns 0.65 against 3.0 µs, 512 columns 27–29 against about 20 µs (with Dsyrk; lanes.SyrkUpper
// then made the cross-products 2–3× faster at 16 and 64 columns, and 1.8× at 512 with
// crossStride). Below it the gain is small and the goroutine would be the steady state's only
// allocation.
const concurrentCrossFrom = 64

// stepScratch is one goroutine's scratch for the mini-batch steps: the batch's labels, the
// assignment's buffers and one row's difference from its centre.
type stepScratch struct {
	labels []int32
	assign kmeans.Assigner
	diff   []float64
}

// stepGoroutines is the number of goroutines flush runs the mini-batch steps on at width d.
func stepGoroutines(d int) int {
	if d >= concurrentCrossFrom {
		return 2
	}
	return 1
}

// flush runs a mini-batch step on the buffered rows and adds their cross-products to the
// covariance estimate. From concurrentCrossFrom columns it works on two goroutines that take
// tasks from one counter, the longest first: the cross-products in two halves of the triangle
// (lanes.SyrkUpperRows; the first half with the column sums), then the k's steps, the largest k
// first. Each task touches its own state, so every one gives the bits it would alone, whichever
// goroutine runs it; on a worker with a core to spare (a file of one row group, or the end of a
// pass) the wide pass takes about half the work's time instead of the sum (DEVELOPERS.md, issue
// 15, "The covariance in blocks of rows").
func (s *Sketch) flush() {
	s.wait()
	if s.mbRows == 0 {
		return
	}
	if len(s.steps) > 1 {
		s.flushShared(s.mbBuf, s.dxBuf, s.mbRows, s.crossRows)
	} else {
		s.addCross()
		s.step()
	}
	s.mbRows, s.crossRows = 0, 0
}

// flushShared is flush on two goroutines (see flush) of the rows rows in mbBuf and dxBuf, the
// first crossRows of them already in the covariance estimate.
func (s *Sketch) flushShared(mbBuf, dxBuf []float64, rows, crossRows int) {
	batch := mbBuf[:rows*s.d]
	dx, newRows := dxBuf[crossRows*s.dxLd:], rows-crossRows // the rows not yet in the estimate
	half := halfTriangle(s.d)
	tasks := int64(2 + len(s.mb))
	var next atomic.Int64
	run := func(sc *stepScratch) {
		for t := next.Add(1) - 1; t < tasks; t = next.Add(1) - 1 {
			switch t {
			case 0:
				s.cross.addSums(dx, s.dxLd, newRows)
				s.cross.addTriangle(dx, s.dxLd, newRows, 0, half)
			case 1:
				s.cross.addTriangle(dx, s.dxLd, newRows, half, s.d)
			default:
				s.mb[len(s.mb)-1-int(t-2)].update(batch, s.d, sc)
			}
		}
	}
	var wg sync.WaitGroup
	wg.Go(func() { run(&s.steps[1]) })
	run(&s.steps[0])
	wg.Wait()
}

// step runs the mini-batch step of every k on the buffered rows.
func (s *Sketch) step() {
	batch := s.mbBuf[:s.mbRows*s.d]
	for _, m := range s.mb {
		m.update(batch, s.d, &s.steps[0])
	}
}

// addCross adds the buffered rows not yet in the covariance estimate.
func (s *Sketch) addCross() {
	s.cross.add(s.dxBuf[s.crossRows*s.dxLd:], s.dxLd, s.mbRows-s.crossRows)
	s.crossRows = s.mbRows
}

// settle folds the active mini-batch state into parts, in raw units, so that the sketch holds only
// order-free, mergeable data.
func (s *Sketch) settle() {
	s.flush()
	for i, m := range s.mb {
		var total float64
		for _, c := range m.counts {
			total += c
		}
		if total == 0 {
			continue
		}
		raw := make([]float64, len(m.centres))
		for c := range m.k {
			for j := range s.d {
				raw[c*s.d+j] = m.centres[c*s.d+j]/s.inv[j] + s.probeCentre[j]
			}
		}
		s.parts[i] = append(s.parts[i], CentreSet{K: m.k, Centres: raw, Counts: slices.Clone(m.counts)})
	}
	s.mb = nil
}

// Merge adds o's summary into s; o is settled (its mini-batch state frozen) and should not be added to
// afterwards. The columns must match. The sizes of s are kept.
func (s *Sketch) Merge(o *Sketch) error {
	if !slices.Equal(s.cfg.Columns, o.cfg.Columns) {
		return fmt.Errorf("sketch: cannot merge sketches of different columns (%q vs %q)", s.cfg.Columns, o.cfg.Columns)
	}
	s.flush()
	o.settle()
	s.mom.merge(&o.mom)
	s.cross.merge(&o.cross)
	s.coreset.merge(o.coreset)
	s.sample.merge(o.sample)
	for i := range s.parts {
		k := s.cfg.MinK + i
		if j := k - o.cfg.MinK; j >= 0 && j < len(o.parts) {
			s.parts[i] = append(s.parts[i], o.parts[j]...)
		}
	}
	s.Meta.Sources = append(s.Meta.Sources, o.Meta.Sources...)
	s.Meta.SkippedRows += o.Meta.SkippedRows
	s.Meta.ProbeRows += o.Meta.ProbeRows
	s.Meta.ContentIDs = append(s.Meta.ContentIDs, o.Meta.ContentIDs...)
	return nil
}

// Coreset returns the weighted coreset in raw units: x row-major and one weight per row. The weights
// are max(1, τ/w) of priority sampling and sum to an unbiased estimate of Rows(). When no more than
// CoresetSize rows were added, every row is in it with weight 1.
func (s *Sketch) Coreset() (x, weights []float64) {
	var tau float64
	full := s.coreset.full()
	if full {
		tau = s.coreset.min()
	}
	skipLast := full
	rows := s.coreset.len()
	if skipLast {
		rows--
	}
	x = make([]float64, 0, max(rows, 0)*s.coreset.d)
	weights = make([]float64, 0, max(rows, 0))
	i := 0
	s.coreset.each(func(key float64, row []float64, w float64) {
		i++
		if skipLast && i == s.coreset.len() {
			return // the (m+1)-th row only sets τ
		}
		x = append(x, row...)
		weights = append(weights, math.Max(1, tau/w))
	})
	return x, weights
}

// Sample returns the uniform sample in raw units, row-major, in a fixed order.
func (s *Sketch) Sample() []float64 {
	x := make([]float64, 0, s.sample.len()*s.sample.d)
	s.sample.each(func(_ float64, row []float64, _ float64) { x = append(x, row...) })
	return x
}

// CentreSets returns the mini-batch k-means results for k in raw units, one per merged part. It
// settles the sketch.
func (s *Sketch) CentreSets(k int) []CentreSet {
	s.settle()
	i := k - s.cfg.MinK
	if i < 0 || i >= len(s.parts) {
		return nil
	}
	return s.parts[i]
}

// SizeBytes estimates the memory held by the sketch's summaries.
func (s *Sketch) SizeBytes() int64 {
	n := int64(len(s.coreset.pts)+len(s.sample.pts)+len(s.mbBuf)+len(s.dxBuf)+len(s.spareMB)+len(s.spareDX)+len(s.cross.C)) * 8
	for _, ps := range s.parts {
		for _, p := range ps {
			n += int64(len(p.Centres)+len(p.Counts)) * 8
		}
	}
	for _, m := range s.mb {
		n += int64(len(m.centres)+len(m.counts)) * 8
	}
	return n
}
