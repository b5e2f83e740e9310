package beam

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	abeam "github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/testing/ptest"
	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/stream/lake/laketest"
)

// writeLake writes a small demo lake (invented data, for a property test): three day partitions of
// 5000 meters in row groups of 1000 rows, 15 work items.
func writeLake(t testing.TB) string {
	t.Helper()
	root := t.TempDir()
	o := synth.DefaultLoadOptions()
	o.Rows, o.RowGroup, o.Partitions = 5000, 1000, 3
	o.Start = time.Date(2026, 11, 28, 0, 0, 0, 0, time.UTC)
	if _, err := synth.WriteLoads(root, o); err != nil {
		t.Fatal(err)
	}
	return root
}

// testOptions are those of `estimate --max-k 6 --coreset 1000 --gap-refs 5 --gap-sample 500
// --anchors 200 --workers 1`.
func testOptions() kgauge.Options {
	o := kgauge.DefaultOptions()
	o.Workers = 1
	o.Criteria.MaxK = 6
	o.Sketch.CoresetSize = 1000
	o.Criteria.GapRefs = 5
	o.Criteria.GapSample = 500
	o.Criteria.Anchors = 200
	return o
}

// mergeUnits builds every unit of plan into its own partial sketch and merges them in order.
func mergeUnits(t *testing.T, plan *kgauge.UnitPlan, order []int) *sketch.Sketch {
	t.Helper()
	total, err := plan.NewPartial()
	if err != nil {
		t.Fatal(err)
	}
	b := kgauge.NewBuilder(plan)
	for _, id := range order {
		sk, err := b.Build(context.Background(), id)
		if err != nil {
			t.Fatal(err)
		}
		if err := total.Merge(sk); err != nil {
			t.Fatal(err)
		}
	}
	return total
}

// TestPartialSketchesMatchBuild checks the property the pipeline rests on: one partial sketch per
// unit, merged in any order, holds the same coreset, sample, row counts and moments as Build's
// single pass.
func TestPartialSketchesMatchBuild(t *testing.T) {
	ctx := context.Background()
	root := writeLake(t)
	opt := testOptions()
	want, _, _, err := kgauge.Build(ctx, []string{root}, opt)
	if err != nil {
		t.Fatal(err)
	}
	plan, err := kgauge.PlanUnits(ctx, []string{root}, opt)
	if err != nil {
		t.Fatal(err)
	}
	if len(plan.Units) != 15 || len(plan.Files) != 3 {
		t.Fatalf("plan has %d units in %d files, want 15 in 3", len(plan.Units), len(plan.Files))
	}
	wantX, wantW := want.Coreset()
	for _, seed := range []uint64{1, 2} {
		order := make([]int, len(plan.Units))
		for i := range order {
			order[i] = i
		}
		rand.New(rand.NewPCG(seed, 7)).Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
		got := mergeUnits(t, plan, order)
		if got.Rows() != want.Rows() || got.Meta.SkippedRows != want.Meta.SkippedRows {
			t.Fatalf("order %d: rows %d skipped %d, want %d and %d", seed, got.Rows(), got.Meta.SkippedRows, want.Rows(), want.Meta.SkippedRows)
		}
		x, w := got.Coreset()
		if !slices.Equal(x, wantX) || !slices.Equal(w, wantW) {
			t.Errorf("order %d: coreset differs from Build's (%d vs %d rows)", seed, len(w), len(wantW))
		}
		if !slices.Equal(got.Sample(), want.Sample()) {
			t.Errorf("order %d: uniform sample differs from Build's", seed)
		}
		gm, wm := got.Moments(), want.Moments()
		gmean, wmean := gm.MeanTo(nil), wm.MeanTo(nil)
		for j := range wmean {
			if d := math.Abs(gmean[j] - wmean[j]); d > 1e-9*(1+math.Abs(wmean[j])) {
				t.Errorf("order %d: mean of column %d is %v, want %v", seed, j, gmean[j], wmean[j])
			}
		}
		if !slices.Equal(gm.Min, wm.Min) || !slices.Equal(gm.Max, wm.Max) {
			t.Errorf("order %d: bounding box differs from Build's", seed)
		}
	}
}

// TestSketchCoder checks that a sketch survives the pipeline's coder whole (Beam's default schema
// coder would keep only the exported Meta), for the merged sketch of a whole lake and for the
// partial sketch of one work item, and that corrupt bytes are an error.
func TestSketchCoder(t *testing.T) {
	ctx := context.Background()
	plan, err := kgauge.PlanUnits(ctx, []string{writeLake(t)}, testOptions())
	if err != nil {
		t.Fatal(err)
	}
	whole := mergeUnits(t, plan, []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14})
	one, err := kgauge.BuildUnit(ctx, plan, 3)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		sk   *sketch.Sketch
	}{{"merged sketch of 15 work items", whole}, {"partial sketch of one work item", one}} {
		data, err := encodeSketch(tc.sk)
		if err != nil {
			t.Fatal(err)
		}
		back, err := decodeSketch(data)
		if err != nil {
			// A sketch holding fewer rows than its coreset and sample sizes is a valid sketch: a
			// work item (row group) smaller than them must cross between workers too.
			t.Errorf("%s (%d rows): %v", tc.name, tc.sk.Rows(), err)
			continue
		}
		x, w := tc.sk.Coreset()
		bx, bw := back.Coreset()
		if back.Rows() != tc.sk.Rows() || len(w) == 0 || !slices.Equal(x, bx) || !slices.Equal(w, bw) {
			t.Errorf("%s: decoded sketch has %d rows and %d coreset rows, want %d and %d", tc.name, back.Rows(), len(bw), tc.sk.Rows(), len(w))
		}
		if !slices.Equal(back.Sample(), tc.sk.Sample()) {
			t.Errorf("%s: decoded sketch has another uniform sample", tc.name)
		}
	}
	data, err := encodeSketch(whole)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		data []byte
	}{
		{"flipped byte", func() []byte { c := bytes.Clone(data); c[len(c)/2] ^= 0xff; return c }()},
		{"truncated", data[:len(data)-9]},
		{"empty", nil},
	} {
		if _, err := decodeSketch(tc.data); err == nil || !strings.HasPrefix(err.Error(), "beam: decode sketch") {
			t.Errorf("%s: error %v, want a beam: decode sketch error", tc.name, err)
		}
	}
	if _, err := encodeSketch(nil); err == nil {
		t.Error("encoding a nil sketch did not fail")
	}
}

// TestBuilderChangedFile checks that a file removed after planning is an error naming it.
func TestBuilderChangedFile(t *testing.T) {
	ctx := context.Background()
	plan, err := kgauge.PlanUnits(ctx, []string{writeLake(t)}, testOptions())
	if err != nil {
		t.Fatal(err)
	}
	gone := plan.Files[plan.Units[7].File].Path
	if err := os.Remove(gone); err != nil {
		t.Fatal(err)
	}
	_, err = kgauge.BuildUnit(ctx, plan, 7)
	if err == nil || !strings.Contains(err.Error(), gone) {
		t.Fatalf("error %v, want one naming %s", err, gone)
	}
	if _, err := kgauge.BuildUnit(ctx, plan, len(plan.Units)); err == nil {
		t.Error("a unit past the plan did not fail")
	}
}

// decodeResult reads a JSON result.
func decodeResult(t *testing.T, data []byte) *kgauge.Result {
	t.Helper()
	var r kgauge.Result
	if err := json.Unmarshal(data, &r); err != nil {
		t.Fatalf("result is not JSON: %v\n%s", err, data)
	}
	return &r
}

// TestPipelineMatchesEstimate runs the pipeline on prism and compares its JSON result with Estimate's
// on the same files: the same verdict, rows, skipped and probe rows, files, columns, coreset and
// scaling, and every k's WCSS within 1 % (the mini-batch seeds pool one centre set per work item
// rather than one per worker; the coreset itself is identical).
func TestPipelineMatchesEstimate(t *testing.T) {
	needPrism(t)
	ctx := context.Background()
	root := writeLake(t)
	opt := testOptions()
	est, _, err := kgauge.Estimate(ctx, []string{root}, opt)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := WriteJSON(&buf, est); err != nil {
		t.Fatal(err)
	}
	want := decodeResult(t, buf.Bytes())

	out := filepath.Join(t.TempDir(), "result.json")
	start := time.Now()
	plan, err := kgauge.PlanUnits(ctx, []string{root}, opt)
	if err != nil {
		t.Fatal(err)
	}
	p, s := abeam.NewPipelineWithRoot()
	if _, err := Pipeline(s, plan, out, start); err != nil {
		t.Fatal(err)
	}
	if err := ptest.Run(p); err != nil {
		t.Fatal(err)
	}
	t.Logf("prism (loopback-only network namespace: %v): plan and pipeline took %.1fs", isolated, time.Since(start).Seconds())
	data, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	got := decodeResult(t, data)

	compareResults(t, got, want)
}

// compareResults checks a pipeline result against Estimate's on the same files (paths compared by
// their base names, so that the files may come from object storage): the same verdict, rows, skipped
// and probe rows, files, columns, coreset and scaling, and every k's WCSS within 1 %.
func compareResults(t *testing.T, got, want *kgauge.Result) {
	t.Helper()
	if got.K != want.K || got.Rows != want.Rows || got.SkippedRows != want.SkippedRows || got.ProbeRows != want.ProbeRows {
		t.Errorf("k %d rows %d skipped %d probe %d, want %d %d %d %d", got.K, got.Rows, got.SkippedRows, got.ProbeRows,
			want.K, want.Rows, want.SkippedRows, want.ProbeRows)
	}
	if !slices.Equal(got.Columns, want.Columns) || len(got.Files) != len(want.Files) || len(got.Ignored) != len(want.Ignored) {
		t.Errorf("columns %v files %d ignored %d, want %v %d %d", got.Columns, len(got.Files), len(got.Ignored),
			want.Columns, len(want.Files), len(want.Ignored))
	}
	for i := range min(len(got.Files), len(want.Files)) {
		g, w := got.Files[i], want.Files[i]
		if filepath.Base(g.Path) != filepath.Base(w.Path) || g.Bytes != w.Bytes || g.Format != w.Format || g.Partition["day"] != w.Partition["day"] {
			t.Errorf("file %d is %+v, want %+v", i, g, w)
		}
	}
	if got.Sketch.CoresetSize != want.Sketch.CoresetSize || got.Sketch.SampleSize != want.Sketch.SampleSize ||
		math.Abs(got.Sketch.CoresetWeight-want.Sketch.CoresetWeight) > 1e-9*want.Sketch.CoresetWeight {
		t.Errorf("sketch %+v, want %+v", got.Sketch, want.Sketch)
	}
	for j := range want.Scaling.Center {
		gc, wc := got.Scaling.Center[j], want.Scaling.Center[j]
		gs, ws := got.Scaling.Spread[j], want.Scaling.Spread[j]
		if math.Abs(gc-wc) > 1e-9*(1+math.Abs(wc)) || math.Abs(gs-ws) > 1e-9*ws {
			t.Errorf("scaling of %s is (%v, %v), want (%v, %v)", want.Columns[j], gc, gs, wc, ws)
		}
	}
	if len(got.PerK) != len(want.PerK) {
		t.Fatalf("%d per-k scores, want %d", len(got.PerK), len(want.PerK))
	}
	for i, w := range want.PerK {
		g := got.PerK[i]
		if g.K != w.K || math.Abs(g.WCSS-w.WCSS) > 0.01*w.WCSS {
			t.Errorf("k=%d: WCSS %v, want %v within 1%%", w.K, g.WCSS, w.WCSS)
		}
	}
}

// TestPipelineOverTable runs the pipeline on prism over a Delta table whose deletion vectors drop
// 14 rows (stream/lake/laketest's sales table at its latest version): the work items carry the
// row deletes, so the result equals Estimate's over the table's live rows.
func TestPipelineOverTable(t *testing.T) {
	needPrism(t)
	ctx := context.Background()
	root := filepath.Join(t.TempDir(), "sales")
	laketest.SalesTable(t, root)
	opt := testOptions()
	opt.Columns = []string{"x", "y"}
	opt.Criteria.MaxK = 4
	opt.Sketch.CoresetSize = 200
	opt.Criteria.GapSample = 100
	opt.Criteria.Anchors = 50
	est, _, err := kgauge.Estimate(ctx, []string{root}, opt)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := WriteJSON(&buf, est); err != nil {
		t.Fatal(err)
	}
	want := decodeResult(t, buf.Bytes())
	if want.Rows != 206 || len(want.Tables) != 1 || want.Tables[0].DeletedRows != 14 {
		t.Fatalf("estimate over the table: %d rows, tables %+v; want the 206 live rows (220 less 14 deleted)", want.Rows, want.Tables)
	}
	out := filepath.Join(t.TempDir(), "result.json")
	start := time.Now()
	plan, err := kgauge.PlanUnits(ctx, []string{root}, opt)
	if err != nil {
		t.Fatal(err)
	}
	p, s := abeam.NewPipelineWithRoot()
	if _, err := Pipeline(s, plan, out, start); err != nil {
		t.Fatal(err)
	}
	if err := ptest.Run(p); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	got := decodeResult(t, data)
	compareResults(t, got, want)
	if len(got.Tables) != 1 || got.Tables[0].DeletedRows != 14 {
		t.Errorf("pipeline result tables %+v, want the table with 14 deleted rows", got.Tables)
	}
}
