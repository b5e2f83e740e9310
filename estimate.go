package kgauge

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strings"
	"time"

	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/sketch/reduce"
)

// Version is the tool version reported in results.
const Version = "0.1.0"

// Result is the outcome of an estimate: the verdict, every criterion's score per k, and what the
// verdict was computed from. Its JSON field names are a stable contract (see the README).
type Result struct {
	K         int      `json:"k"`
	RunnerUp  *int     `json:"runner_up"`
	Agreement float64  `json:"agreement"`
	Structure bool     `json:"structure"`
	AtMaxK    bool     `json:"at_max_k"`
	Agree     []string `json:"agreeing"`
	Disagree  []string `json:"disagreeing"`
	Rule      string   `json:"rule"`
	// Confidence is the verdict's calibrated confidence (bench/report/CALIBRATION.md): on the
	// benchmark grid, verdicts given this confidence were right about this share of the time.
	Confidence   float64            `json:"confidence"`
	Unstable     bool               `json:"unstable"`      // another k holds nearly as much vote weight
	Alternatives []int              `json:"alternatives"`  // those k, strongest first
	Why          string             `json:"why"`           // what decided the verdict, in one sentence
	WhyRunnerUp  string             `json:"why_runner_up"` // "" when there is no runner-up
	OneMode      criteria.ModeCheck `json:"one_mode_check"`
	FarRows      criteria.FarRows   `json:"far_rows"`
	MixturesStop *int               `json:"mixtures_stopped_at_k"` // criteria.Result.MixturesStopAt; null when the mixtures ran to max-k
	Skewed       []SkewedColumn     `json:"skewed_columns"`        // columns that look right-skewed, and what was done
	Votes        map[string]*int    `json:"votes"`
	VoteList     []criteria.Vote    `json:"vote_details"`
	PerK         []criteria.Scores  `json:"per_k"`
	Rows         int64              `json:"rows"`
	SkippedRows  int64              `json:"skipped_rows"`
	ProbeRows    int64              `json:"probe_rows"`
	Columns      []string           `json:"columns"`
	Ignored      []IgnoredColumn    `json:"ignored_columns"`
	Files        []FileInfo         `json:"files"`
	Tables       []TableInfo        `json:"tables"`   // Delta Lake and Iceberg tables read as tables; empty when none
	Sketches     []string           `json:"sketches"` // saved sketch files merged; empty when none
	// SkippedFiles are data files left out because they cannot be read (--skip-unreadable);
	// empty when none.
	SkippedFiles []SkippedFile `json:"skipped_files"`
	Scaling      Scaling       `json:"scaling"`
	// Reduction is set when the criteria ran in fewer dimensions than the feature columns: the
	// summary mapped onto its leading principal components (sketch/reduce); null otherwise.
	Reduction  *reduce.Info `json:"reduction"`
	Sketch     SketchInfo   `json:"sketch"`
	MinK       int          `json:"min_k"`
	MaxK       int          `json:"max_k"`
	Seed       uint64       `json:"seed"`
	Version    string       `json:"version"`
	Timings    Timings      `json:"timings"`
	Throughput *Throughput  `json:"throughput"` // the pass's measured speed (see Project); null without a pass
	Projection []cost.Row   `json:"projection"` // the model's time for 1×, 10×, 100× the input; null without a pass

	criteria *criteria.Result
}

// SketchInfo describes the summary the verdict was computed from.
type SketchInfo struct {
	Bytes         int64   `json:"bytes"`
	CoresetSize   int     `json:"coreset_size"`
	CoresetWeight float64 `json:"coreset_weight"`
	SampleSize    int     `json:"sample_size"`
	CovRows       int64   `json:"covariance_rows"`
}

// Criteria returns the full criteria result behind r (fits, Ward merges), or nil for a decoded Result.
func (r *Result) Criteria() *criteria.Result { return r.criteria }

// Evaluate scales the sketch's summary and runs the criteria on it.
func Evaluate(ctx context.Context, sk *sketch.Sketch, opt Options) (*Result, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	// A k outside the sketch's own range has no mini-batch seed centres; its fits start from
	// k-means++ restarts on the coreset alone.
	opt = opt.withDefaults()
	if n := sk.Rows(); n < int64(opt.Criteria.MaxK) {
		return nil, fmt.Errorf("%w: %d usable rows is fewer than max-k (%d)", ErrTooFewRows, n, opt.Criteria.MaxK)
	}
	if d := sk.Dims(); d > MaxColumns {
		return nil, fmt.Errorf("%w: the sketch has %d feature columns, more than %d", ErrTooWide, d, MaxColumns)
	}
	if opt.Scale == Raw {
		if err := checkRawSketch(sk); err != nil {
			return nil, err
		}
	}
	if opt.Scale == Log {
		if err := checkPositive(sk); err != nil {
			return nil, err
		}
	}
	start := time.Now()
	sum, sc := Summarize(sk, opt.Scale)
	sum, red := ReduceWide(sum, opt)
	copt := opt.Criteria
	if p := opt.Progress; p != nil {
		copt.Progress = p.scoredShare
	}
	cr, err := criteria.Evaluate(ctx, sum, copt)
	if err != nil {
		return nil, err
	}
	r := &Result{K: cr.Verdict.K, Agreement: cr.Verdict.Agreement, Structure: cr.Verdict.Structure, AtMaxK: cr.Verdict.AtMaxK,
		Agree: cr.Verdict.Agree, Disagree: cr.Verdict.Disagree, Rule: cr.Verdict.Rule,
		Confidence: cr.Verdict.Confidence, Unstable: cr.Verdict.Unstable, Alternatives: cr.Verdict.Alternatives,
		Why: cr.Verdict.Why, WhyRunnerUp: cr.Verdict.WhyRunner, OneMode: cr.Modes, FarRows: cr.Far, MixturesStop: nonZero(cr.MixturesStopAt),
		Skewed: skewedColumns(sk, sc),
		Votes:  map[string]*int{}, VoteList: cr.Votes, PerK: cr.PerK,
		Rows: sk.Rows(), SkippedRows: sk.Meta.SkippedRows, ProbeRows: sk.Meta.ProbeRows,
		Columns: sk.Columns(), Ignored: []IgnoredColumn{}, Files: []FileInfo{}, Tables: []TableInfo{},
		Sketches: []string{}, SkippedFiles: []SkippedFile{}, Scaling: sc,
		MinK: opt.Criteria.MinK, MaxK: opt.Criteria.MaxK, Seed: opt.Seed, Version: Version, criteria: cr,
		Reduction: red}
	if math.IsNaN(r.Confidence) {
		r.Confidence = 0 // no calibration table (never with the embedded weights)
	}
	r.RunnerUp = nonZero(cr.Verdict.RunnerUp)
	for _, v := range cr.Votes {
		if v.Abstain {
			r.Votes[v.Criterion] = nil
			continue
		}
		k := v.K
		r.Votes[v.Criterion] = &k
	}
	cross := sk.Cross()
	r.Sketch = SketchInfo{Bytes: sk.SizeBytes(), CoresetSize: sum.Coreset.Len(),
		CoresetWeight: sum.Coreset.TotalWeight(), SampleSize: sum.Sample.Len(), CovRows: cross.N}
	r.Timings.Criteria = time.Since(start).Seconds()
	return r, nil
}

// ErrTooFewRows is returned when there are fewer usable rows than the largest k.
var ErrTooFewRows = errors.New("kgauge: too few rows")

// Estimate runs the whole job on inputs: data files, directories and globs (read in one pass) and
// saved sketch files (merged without reading their data). It returns the result and the merged
// sketch, which the caller may save.
func Estimate(ctx context.Context, inputs []string, opt Options) (*Result, *sketch.Sketch, error) {
	if err := opt.Validate(); err != nil {
		return nil, nil, err
	}
	opt = opt.withDefaults()
	sketchPaths, dataPaths, err := splitInputs(inputs)
	if err != nil {
		return nil, nil, err
	}
	// Directories and globs may hold saved sketches as well as data files (a ledger's sketch
	// folder, a quoted glob over it): they are found in one discovery and merged like named ones.
	var found *discovered
	if len(dataPaths) > 0 {
		if found, err = discoverInputs(dataPaths, opt, true); err != nil {
			return nil, nil, err
		}
		sketchPaths = append(sketchPaths, found.sketches...)
		if len(found.files) == 0 && len(found.skipped) == 0 {
			dataPaths = nil // sketches only
		}
	}
	// Saved sketches first: each is taken once, and their content identities keep the data files
	// they were built from out of the pass (an error, not a silent double count).
	loaded, owners, err := loadSketches(sketchPaths)
	if err != nil {
		return nil, nil, err
	}
	var (
		total *sketch.Sketch
		in    *Input
		tm    Timings
	)
	if len(dataPaths) > 0 {
		total, in, tm, err = build(ctx, dataPaths, opt, owners, found)
		if err != nil {
			return nil, nil, err
		}
	}
	sketchPaths = sketchPaths[:0]
	for _, ls := range loaded {
		sketchPaths = append(sketchPaths, ls.path)
		if total == nil {
			total = ls.sk
			continue
		}
		if err := sameColumns(total, ls.sk, in != nil); err != nil {
			return nil, nil, &InputError{Path: ls.path, Err: err}
		}
		if err := total.Merge(ls.sk); err != nil {
			return nil, nil, &InputError{Path: ls.path, Err: err}
		}
	}
	if len(dataPaths) > 0 && opt.AfterPass != nil {
		opt.AfterPass()
	}
	opt.Progress.setStage(StageCriteria)
	r, err := Evaluate(ctx, total, opt)
	if err != nil {
		return nil, nil, err
	}
	crit := r.Timings.Criteria
	r.Timings = tm
	r.Timings.Criteria = crit
	r.Sketches = orEmpty(sketchPaths)
	if in != nil {
		r.Files = orEmpty(in.Files)
		r.Ignored = orEmpty(in.Ignored)
		r.SkippedFiles = orEmpty(in.Skipped)
		r.Tables = orEmpty(in.Tables)
	}
	opt.Progress.setStage(StageDone)
	return r, total, nil
}

// orEmpty returns s, or an empty slice for nil: a list of the JSON contract is [] when empty,
// never null or missing.
func orEmpty[T any](s []T) []T {
	if s == nil {
		return []T{}
	}
	return s
}

// ErrColumnsDiffer means a saved sketch and the other inputs hold different feature columns, so
// they cannot be merged.
var ErrColumnsDiffer = errors.New("kgauge: the inputs hold different columns")

// sameColumns checks that the sketch o holds the feature columns of total, in the same order.
// fromData says total holds data files read in this run.
func sameColumns(total, o *sketch.Sketch, fromData bool) error {
	a, b := total.Columns(), o.Columns()
	if slices.Equal(a, b) {
		return nil
	}
	other := "the sketches before it"
	if fromData {
		other = "the data files"
	}
	return fmt.Errorf("%w: this sketch holds %s, %s hold %s (a sketch is merged only with data of the same columns; "+
		"choose them with --columns, in the same order)", ErrColumnsDiffer, quoteList(b), other, quoteList(a))
}

// quoteList prints names as a short list: "a", "b", "c", at most eight names.
func quoteList(names []string) string {
	q := make([]string, 0, min(len(names), 8))
	for _, n := range names[:min(len(names), 8)] {
		q = append(q, fmt.Sprintf("%q", n))
	}
	if len(names) > 8 {
		return fmt.Sprintf("%s … (%d columns)", strings.Join(q, ", "), len(names))
	}
	return strings.Join(q, ", ")
}

// splitInputs separates saved sketch files (recognised by their magic bytes) from data inputs.
func splitInputs(inputs []string) (sketches, data []string, err error) {
	for _, p := range inputs {
		if isSketchFile(p) {
			sketches = append(sketches, p)
		} else {
			data = append(data, p)
		}
	}
	if len(sketches)+len(data) == 0 {
		return nil, nil, errors.New("no input given")
	}
	return sketches, data, nil
}

func isSketchFile(path string) bool {
	if fi, err := os.Stat(path); err != nil || !fi.Mode().IsRegular() {
		return false // a FIFO would block the open; stream refuses it with an error naming it
	}
	f, err := os.Open(path)
	if err != nil {
		return false
	}
	defer f.Close()
	head := make([]byte, 8)
	if _, err := io.ReadFull(f, head); err != nil {
		return false
	}
	return bytes.Equal(head, []byte("KGSKETCH"))
}

// LoadSketch reads a saved sketch file; errors name the file.
func LoadSketch(path string) (*sketch.Sketch, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, &InputError{Path: path, Err: err}
	}
	defer f.Close()
	sk, err := sketch.Decode(f)
	if err != nil {
		return nil, &InputError{Path: path, Err: err}
	}
	if len(sk.Meta.Sources) == 0 {
		sk.Meta.Sources = []string{path}
	}
	return sk, nil
}

// InputError is a problem with an input file other than its data rows (which stream reports).
type InputError struct {
	Path string
	Err  error
}

func (e *InputError) Error() string { return e.Path + ": " + e.Err.Error() }
func (e *InputError) Unwrap() error { return e.Err }

// nonZero returns a pointer to v, or nil when v is 0 (a JSON null).
func nonZero(v int) *int {
	if v == 0 {
		return nil
	}
	return &v
}
