package report

import (
	"bytes"
	"context"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"html"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/memory"
	"github.com/apache/arrow/go/v17/parquet/pqarrow"
	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/capacity"
	"github.com/kgauge/kgauge/cost"
)

// Hostile names: a feature column, an ignored column and a folder that would run script if the page
// did not escape them.
const (
	hostileColumn  = "<script>alert(1)</script>"
	hostileIgnored = `<img src=x onerror="document.title='pwned'">`
	hostileDir     = "lake-<i onmouseover=alert(3)>x"
)

// writeBlobs writes a small Parquet file of three separated blobs (invented data, for the renderer
// only) with the hostile column names.
func writeBlobs(t testing.TB, path string) {
	t.Helper()
	schema := arrow.NewSchema([]arrow.Field{
		{Name: hostileColumn, Type: arrow.PrimitiveTypes.Float64},
		{Name: "y", Type: arrow.PrimitiveTypes.Float64},
		{Name: "z", Type: arrow.PrimitiveTypes.Float64},
		{Name: hostileIgnored, Type: arrow.BinaryTypes.String},
	}, nil)
	b := array.NewRecordBuilder(memory.DefaultAllocator, schema)
	defer b.Release()
	rng := rand.New(rand.NewPCG(3, 4))
	centres := [][3]float64{{0, 0, 0}, {8, 0, 0}, {0, 8, 4}}
	for i := range 3000 {
		c := centres[i%3]
		for j := range 3 {
			b.Field(j).(*array.Float64Builder).Append(c[j] + rng.NormFloat64())
		}
		b.Field(3).(*array.StringBuilder).Append("row")
	}
	rec := b.NewRecord()
	defer rec.Release()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	w, err := pqarrow.NewFileWriter(schema, f, nil, pqarrow.DefaultWriterProps())
	if err != nil {
		t.Fatal(err)
	}
	if err := w.Write(rec); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

var (
	fixtureOnce sync.Once
	fixtureRes  *kgauge.Result
	fixtureErr  error
)

// fixture runs a small estimate on the hostile file once per test binary.
func fixture(t testing.TB) *kgauge.Result {
	t.Helper()
	fixtureOnce.Do(func() {
		dir, err := os.MkdirTemp("", "kgauge-report-test-")
		if err != nil {
			fixtureErr = err
			return
		}
		defer os.RemoveAll(dir)
		sub := filepath.Join(dir, hostileDir)
		if fixtureErr = os.Mkdir(sub, 0o755); fixtureErr != nil {
			return
		}
		writeBlobs(t, filepath.Join(sub, "part-0.parquet"))
		opt := kgauge.DefaultOptions()
		opt.Criteria.MaxK = 6
		opt.Sketch.CoresetSize = 600
		opt.Sketch.SampleSize = 600
		opt.Criteria.GapRefs = 4
		opt.Criteria.GapSample = 400
		opt.Criteria.Anchors = 150
		opt.Workers = 2
		w, err := kgauge.PlanWorkload([]string{sub}, opt)
		if err != nil {
			fixtureErr = err
			return
		}
		fixtureRes, _, fixtureErr = kgauge.Estimate(context.Background(), []string{sub}, opt)
		if fixtureErr == nil {
			capacity.Project(fixtureRes, w)
		}
	})
	if fixtureErr != nil {
		t.Fatal(fixtureErr)
	}
	return fixtureRes
}

var (
	wideOnce sync.Once
	wideRes  *kgauge.Result
	wideErr  error
)

// wideFixture is the estimate of a small partition of the demo scenario (24 hourly columns) with
// k = 1..20: the widest tables and the longest k axes a default run draws.
func wideFixture(t testing.TB) *kgauge.Result {
	t.Helper()
	wideOnce.Do(func() {
		dir, err := os.MkdirTemp("", "kgauge-report-wide-")
		if err != nil {
			wideErr = err
			return
		}
		defer os.RemoveAll(dir)
		gen := synth.DefaultLoadOptions()
		gen.Rows, gen.RowGroup, gen.Partitions, gen.Seed = 6000, 2048, 1, 3
		if _, wideErr = synth.WriteLoads(dir, gen); wideErr != nil {
			return
		}
		opt := kgauge.DefaultOptions()
		opt.Criteria.MaxK = 20
		opt.Sketch.CoresetSize, opt.Sketch.SampleSize = 1500, 1000
		opt.Criteria.GapRefs, opt.Criteria.GapSample, opt.Criteria.Anchors = 3, 500, 200
		opt.Workers = 2
		wideRes, _, wideErr = kgauge.Estimate(context.Background(), []string{dir}, opt)
	})
	if wideErr != nil {
		t.Fatal(wideErr)
	}
	return wideRes
}

func render(t testing.TB) string {
	t.Helper()
	res := fixture(t)
	plan := cost.Predict(cost.Workload{Files: 1, Units: 1, Rows: 3000, Bytes: 72000, Dims: 3, Workers: 2,
		MinK: 1, MaxK: 6, Coreset: 600, Sample: 600, MiniBatchRows: 1 << 17, BatchRows: 4096, ProbeRows: 65536,
		ProbeUnits: 16, Restarts: 3, Anchors: 150, GapRefs: 4, GapSample: 400, GapRestarts: 1}, cost.Default())
	var b bytes.Buffer
	if err := Render(&b, res, &plan); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

func TestRenderEscapesNames(t *testing.T) {
	page := render(t)
	for _, raw := range []string{hostileColumn, "<img src=x", "<i onmouseover"} {
		if strings.Contains(page, raw) {
			t.Errorf("page contains the raw name %q", raw)
		}
	}
	for _, escaped := range []string{"&lt;script&gt;alert(1)&lt;/script&gt;", "&lt;img src=x onerror=", "lake-&lt;i onmouseover=alert(3)&gt;x"} {
		if !strings.Contains(page, escaped) {
			t.Errorf("page lacks the escaped text %q", escaped)
		}
	}
	// The only script element is the JSON data block.
	if n := strings.Count(page, "<script"); n != 1 || !strings.Contains(page, `<script type="application/json" id="kgauge-result">`) {
		t.Errorf("%d script elements; want only the JSON block", n)
	}
}

func TestRenderSections(t *testing.T) {
	page := render(t)
	res := fixture(t)
	for _, want := range []string{Caution, `id="fig-wcss"`, `id="fig-silhouette"`, `id="fig-gap"`, `id="fig-ic"`,
		`id="fig-ward"`, `id="votes"`, `id="per-k"`, `id="accuracy"`, `id="runtime"`, `id="projection"`, `id="throughput"`,
		"rows skipped", "Columns not used", "planned s"} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	// html/template writes '+' in attributes as &#43;; the browser reads the same URI.
	imgs := regexp.MustCompile(`<img src="(data:image/svg[^"]*)"`).FindAllStringSubmatch(page, -1)
	if len(imgs) != 5 {
		t.Errorf("%d inline SVG plots, want 5", len(imgs))
	}
	for _, m := range imgs {
		uri := html.UnescapeString(m[1])
		body, ok := strings.CutPrefix(uri, "data:image/svg+xml;base64,")
		svg, err := base64.StdEncoding.DecodeString(body)
		if !ok || err != nil || !bytes.Contains(svg, []byte("<svg")) {
			t.Errorf("plot is not a base64 SVG data URI (%v): %.80s", err, uri)
		}
	}
	if regexp.MustCompile(`(?i)(src|href)="(https?:)?//`).MatchString(page) {
		t.Error("page refers to a network resource")
	}
	// Two per-k tables (scores of the fits; references, mixtures and the dendrogram), each with
	// the verdict's row highlighted.
	if got := strings.Count(page, `<tr class="chosen">`); got != 2 {
		t.Errorf("%d highlighted per-k rows, want 2 (one per table)", got)
	}
	if len(res.PerK) != 6 {
		t.Fatalf("fixture has %d k", len(res.PerK))
	}
}

// TestEmbeddedJSON: the JSON block decodes to the result the page was made from.
func TestEmbeddedJSON(t *testing.T) {
	page := render(t)
	res := fixture(t)
	m := regexp.MustCompile(`(?s)<script type="application/json" id="kgauge-result">(.*?)</script>`).FindStringSubmatch(page)
	if m == nil {
		t.Fatal("no JSON block")
	}
	var got kgauge.Result
	if err := json.Unmarshal([]byte(m[1]), &got); err != nil {
		t.Fatalf("embedded JSON does not decode: %v", err)
	}
	if got.K != res.K || got.Rows != res.Rows || len(got.PerK) != len(res.PerK) || got.Columns[0] != hostileColumn {
		t.Errorf("embedded result k=%d rows=%d per_k=%d col0=%q; want k=%d rows=%d per_k=%d col0=%q",
			got.K, got.Rows, len(got.PerK), got.Columns[0], res.K, res.Rows, len(res.PerK), hostileColumn)
	}
	if strings.Contains(m[1], "</") {
		t.Error("the JSON block contains '</', which could end the script element")
	}
}

func TestWriteAtomic(t *testing.T) {
	res := fixture(t)
	dir := t.TempDir()
	path := filepath.Join(dir, "r.html")
	if err := Write(path, res, nil); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil || !bytes.HasPrefix(b, []byte("<!DOCTYPE html>")) {
		t.Fatalf("report not written: %v", err)
	}
	// A failed render leaves neither the target nor a temporary file behind.
	bad := filepath.Join(dir, "bad.html")
	if err := Write(bad, nil, nil); err == nil {
		t.Fatal("Write of a nil result succeeded")
	}
	if err := Write(filepath.Join(dir, "missing", "x.html"), res, nil); err == nil {
		t.Error("Write into a missing directory succeeded")
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		t.Errorf("directory holds %v, want only r.html", names)
	}
}

// TestSkippedFilesShown: files left out by --skip-unreadable are listed, escaped, with the reason.
func TestSkippedFilesShown(t *testing.T) {
	res := *fixture(t)
	if strings.Contains(render(t), `id="skipped-files"`) {
		t.Fatal("a run that skipped nothing shows a skipped-files table")
	}
	res.SkippedFiles = []kgauge.SkippedFile{{Path: "lake/<b>bad</b>.parquet", Reason: "truncated footer"}}
	var b bytes.Buffer
	if err := Render(&b, &res, nil); err != nil {
		t.Fatal(err)
	}
	page := b.String()
	if !strings.Contains(page, `id="skipped-files"`) || !strings.Contains(page, "lake/&lt;b&gt;bad&lt;/b&gt;.parquet") ||
		!strings.Contains(page, "truncated footer") {
		t.Error("the skipped file is not listed (escaped, with its reason)")
	}
}

// TestPrintStylesheet: printed, the per-k tables are not clipped by their scrolling wrapper (a
// print has no scroll bar), may break across pages between rows, and keep each row whole.
func TestPrintStylesheet(t *testing.T) {
	page := render(t)
	i := strings.Index(page, "@media print {")
	if i < 0 {
		t.Fatal("the page has no print stylesheet")
	}
	end := strings.Index(page[i:], "\n}")
	rules := page[i : i+end]
	for _, want := range []string{".scroll { overflow: visible; }", "section#per-k { break-inside: auto; }", "tr { break-inside: avoid; }"} {
		if !strings.Contains(rules, want) {
			t.Errorf("the print stylesheet lacks %q", want)
		}
	}
	if !strings.Contains(page, `<section id="per-k">`) || !strings.Contains(page, `<div class="scroll"><table id="per-k-fit">`) {
		t.Error("the per-k tables are no longer where the print rules expect them")
	}
}

// TestAgreementAsShare: the page gives agreement and confidence as the text output and track do,
// a share to two places (issue 17 item 6), never a percentage.
func TestAgreementAsShare(t *testing.T) {
	page := render(t)
	res := fixture(t)
	want := fmt.Sprintf("agreement %.2f (share of the voting criteria)", res.Agreement)
	if !strings.Contains(page, want) {
		t.Errorf("page lacks %q", want)
	}
	if want := fmt.Sprintf("Confidence %.2f:", res.Confidence); !strings.Contains(page, want) {
		t.Errorf("page lacks %q", want)
	}
}
