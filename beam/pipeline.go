package beam

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"reflect"
	"time"

	abeam "github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/register"
	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/internal/atomicfile"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/stream/objstore"
)

// WorkItem is one element of the pass: one unit (Parquet row group, Arrow record batch) of one file.
// The pipeline never has one element per row.
type WorkItem struct {
	Unit  int    // global unit number in the plan (the sketch's BeginUnit argument)
	File  string // the file's path, for logs and errors
	Index int    // row group or record batch within the file
	Bytes int64  // selected column bytes, for the runner's metrics
}

func init() {
	abeam.RegisterType(reflect.TypeOf((*WorkItem)(nil)).Elem())
	register.DoFn2x1[int, func(WorkItem), error](&expandFn{})
	register.Emitter1[WorkItem]()
	register.DoFn2x2[context.Context, WorkItem, *sketch.Sketch, error](&sketchFn{})
	register.Combiner3[*sketch.Sketch, *sketch.Sketch, *sketch.Sketch](&mergeFn{})
	register.DoFn2x2[context.Context, *sketch.Sketch, string, error](&resultFn{})
}

// Pipeline adds the pass over plan to scope s: one element per file, expanded to one work item per
// unit, reshuffled, read into one partial sketch per work item, merged by a combiner into one sketch,
// and evaluated. The returned collection holds the one JSON result (as `kgauge estimate --json`
// prints it), which is also written to out when out is not empty. start is when the pass began (the
// result's pass time runs from it to the criteria).
func Pipeline(s abeam.Scope, plan *kgauge.UnitPlan, out string, start time.Time) (abeam.PCollection, error) {
	if len(plan.Units) == 0 {
		return abeam.PCollection{}, fmt.Errorf("%w in %d file(s): they hold no row groups or record batches", kgauge.ErrNoRows, len(plan.Files))
	}
	enc, err := json.Marshal(plan)
	if err != nil {
		return abeam.PCollection{}, fmt.Errorf("beam: encode the plan: %w", err)
	}
	var files []int
	for i := range plan.Files {
		files = append(files, i)
	}
	s = s.Scope("kgauge")
	matched := abeam.CreateList(s.Scope("MatchedFiles"), files)
	items := abeam.ParDo(s.Scope("WorkItems"), &expandFn{Plan: enc}, matched)
	items = abeam.Reshuffle(s.Scope("Reshuffle"), items)
	partial := abeam.ParDo(s.Scope("PartialSketch"), &sketchFn{Plan: enc}, items)
	merged := abeam.Combine(s.Scope("MergeSketches"), &mergeFn{Plan: enc}, partial)
	return abeam.ParDo(s.Scope("Criteria"), &resultFn{Plan: enc, Out: out, StartUnixNano: start.UnixNano()}, merged), nil
}

// decodePlan reads the plan a DoFn carries.
func decodePlan(enc []byte) (*kgauge.UnitPlan, error) {
	var p kgauge.UnitPlan
	if err := json.Unmarshal(enc, &p); err != nil {
		return nil, fmt.Errorf("beam: decode the plan: %w", err)
	}
	return &p, nil
}

// expandFn turns a file number into the work items of its units.
type expandFn struct {
	Plan []byte
	plan *kgauge.UnitPlan
}

func (f *expandFn) Setup() error {
	var err error
	f.plan, err = decodePlan(f.Plan)
	return err
}

func (f *expandFn) ProcessElement(file int, emit func(WorkItem)) error {
	if file < 0 || file >= len(f.plan.Files) {
		return fmt.Errorf("beam: file %d is not in the plan (%d files)", file, len(f.plan.Files))
	}
	for _, u := range f.plan.Units {
		if u.File == file {
			emit(WorkItem{Unit: u.ID, File: f.plan.Files[file].Path, Index: u.Index, Bytes: u.Bytes})
		}
	}
	return nil
}

// sketchFn reads one work item into its partial sketch.
type sketchFn struct {
	Plan    []byte
	builder *kgauge.Builder
}

func (f *sketchFn) Setup() error {
	p, err := decodePlan(f.Plan)
	if err != nil {
		return err
	}
	f.builder = kgauge.NewBuilder(p)
	return nil
}

func (f *sketchFn) ProcessElement(ctx context.Context, w WorkItem) (*sketch.Sketch, error) {
	sk, err := f.builder.Build(ctx, w.Unit)
	if err != nil {
		return nil, fmt.Errorf("beam: work item %d (%s, unit %d): %w", w.Unit, w.File, w.Index, err)
	}
	return sk, nil
}

// mergeFn merges partial sketches; its accumulator is the sketch itself, coded in the sketch file
// format (see coder.go). The empty accumulator is an empty sketch of the plan, so merging is
// associative and commutative with an identity, as a combiner needs.
type mergeFn struct {
	Plan []byte
	plan *kgauge.UnitPlan
}

func (f *mergeFn) load() error {
	if f.plan != nil {
		return nil
	}
	var err error
	f.plan, err = decodePlan(f.Plan)
	return err
}

func (f *mergeFn) CreateAccumulator() (*sketch.Sketch, error) {
	if err := f.load(); err != nil {
		return nil, err
	}
	return f.plan.NewPartial()
}

func (f *mergeFn) AddInput(acc, in *sketch.Sketch) (*sketch.Sketch, error) {
	if err := acc.Merge(in); err != nil {
		return nil, fmt.Errorf("beam: merge sketches: %w", err)
	}
	return acc, nil
}

func (f *mergeFn) MergeAccumulators(a, b *sketch.Sketch) (*sketch.Sketch, error) {
	return f.AddInput(a, b)
}

func (f *mergeFn) ExtractOutput(acc *sketch.Sketch) *sketch.Sketch { return acc }

// resultFn runs the criteria on the merged sketch and writes the JSON result.
type resultFn struct {
	Plan          []byte
	Out           string
	StartUnixNano int64
}

func (f *resultFn) ProcessElement(ctx context.Context, sk *sketch.Sketch) (string, error) {
	pass := time.Since(time.Unix(0, f.StartUnixNano))
	plan, err := decodePlan(f.Plan)
	if err != nil {
		return "", err
	}
	res, err := kgauge.EvaluateMerged(ctx, plan, sk, pass)
	if err != nil {
		return "", err
	}
	var b bytes.Buffer
	if err := WriteJSON(&b, res); err != nil {
		return "", err
	}
	if f.Out != "" {
		if err := writeOutput(ctx, f.Out, b.Bytes()); err != nil {
			return "", err
		}
	}
	return b.String(), nil
}

// WriteJSON writes res as `kgauge estimate --json` does: indented by two spaces, one trailing newline.
func WriteJSON(w io.Writer, res *kgauge.Result) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	if err := enc.Encode(res); err != nil {
		return fmt.Errorf("beam: encode the result: %w", err)
	}
	return nil
}

// writeOutput writes data to path atomically: a local file through a temporary file and a rename, an
// object URL (s3://…) in one request.
func writeOutput(ctx context.Context, path string, data []byte) error {
	if objstore.IsURL(path) {
		return objstore.Default.WriteFile(ctx, path, data)
	}
	err := atomicfile.Write(path, 0o644, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
	if err != nil {
		return fmt.Errorf("beam: write %s: %w", path, err)
	}
	return nil
}

// ErrNoOutput is returned by Run when the pipeline finished without a result.
var ErrNoOutput = errors.New("beam: the pipeline produced no result")

// Run plans inputs with opt on this machine (matching, footers, probe), builds the pipeline and
// executes it on the named runner (registered by importing it, or by Apache Beam's x/beamx). The
// JSON result is written to out, which the workers must be able to write: a local path for prism in
// loopback mode, an object URL (s3://…) or a shared file system otherwise.
func Run(ctx context.Context, runner string, inputs []string, opt kgauge.Options, out string) (abeam.PipelineResult, error) {
	plan, err := kgauge.PlanUnits(ctx, inputs, opt)
	if err != nil {
		return nil, err
	}
	start := time.Now() // the result's pass time; opening and probing are timed by the plan
	p, s := abeam.NewPipelineWithRoot()
	if _, err := Pipeline(s, plan, out, start); err != nil {
		return nil, err
	}
	res, err := abeam.Run(ctx, runner, p)
	if err != nil {
		return nil, fmt.Errorf("beam: run on %s: %w", runner, err)
	}
	return res, nil
}
