package report

import (
	"bytes"
	_ "embed"
	"encoding/json"
	"fmt"
	"html/template"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/atomicfile"
)

//go:embed page.html.tmpl
var pageText string

var page = template.Must(template.New("page").Funcs(template.FuncMap{
	"num":   num,
	"fixed": fixed,
	"pct":   func(v float64) string { return fmt.Sprintf("%.0f%%", 100*v) },
	// share prints agreement and confidence as the text output and track do: a share to two places.
	"share":   func(v float64) string { return fmt.Sprintf("%.2f", v) },
	"bytes":   bytesText,
	"bytesf":  func(v float64) string { return bytesText(int64(v)) },
	"seconds": func(v float64) string { return fmt.Sprintf("%.3f", v) },
	"join":    strings.Join,
	"swatch": func(e LegendEntry) template.CSS {
		if e.Mark == "band" {
			return template.CSS("background: " + e.Colour)
		}
		return template.CSS("border-color: " + e.Colour)
	},
	"partition": func(m map[string]string) string {
		keys := make([]string, 0, len(m))
		for k := range m {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for i, k := range keys {
			keys[i] = k + "=" + m[k]
		}
		return strings.Join(keys, ", ")
	},
}).Parse(pageText))

// Caution is the sentence every report carries.
const Caution = "A cluster count is evidence for a person to review, not a fact."

// view is what the template sees.
type view struct {
	R                      *kgauge.Result
	Input                  string // what was read, in a few words
	InputCount             string
	Date                   string // when the page was written, UTC
	FoldFiles, FoldColumns bool   // long lists start folded
	Caution                string
	RunnerUp               string
	Votes                  []voteRow
	Figures                []Figure
	Ward                   criteria.Ward
	Accuracy               accuracy
	Plan                   *cost.Prediction
	Stages                 []stageRow
	JSON                   template.JS
}

type voteRow struct {
	Criterion, K, Note string
	Agrees             bool
}

type stageRow struct {
	Name                string
	Measured, Predicted float64
	HasPrediction       bool
}

// accuracy is what sampling gave up at the sizes used.
type accuracy struct {
	K               int
	SilWidth        float64 // hi − lo of the silhouette interval at the verdict
	CoresetSize     int
	CoresetWeight   float64
	WeightRatio     float64 // coreset weight ÷ rows
	RowsPerCoreset  float64
	SampleSize      int
	CovRows         int64
	GapRefs         int
	GapSample       int
	Anchors         int
	HaveCriteriaOpt bool
}

// Render writes the report of res to w. plan, when not nil, is the model's prediction made before
// the run, shown beside the measured stage times.
func Render(w io.Writer, res *kgauge.Result, plan *cost.Prediction) error {
	if res == nil {
		return fmt.Errorf("report: no result")
	}
	v := view{R: res, Caution: Caution, RunnerUp: "none", Plan: plan,
		Input: inputName(res), InputCount: inputCount(res), Date: now().UTC().Format("2006-01-02 15:04 UTC"),
		FoldFiles: len(res.Files)+len(res.Sketches) > foldRows, FoldColumns: len(res.Columns) > foldRows}
	if res.RunnerUp != nil {
		v.RunnerUp = fmt.Sprint(*res.RunnerUp)
	}
	for _, vt := range res.VoteList {
		row := voteRow{Criterion: vt.Criterion, Note: vt.Note, K: "abstains"}
		if !vt.Abstain {
			row.K = fmt.Sprint(vt.K)
			row.Agrees = vt.K == res.K
		}
		v.Votes = append(v.Votes, row)
	}
	if cr := res.Criteria(); cr != nil {
		v.Ward = cr.Ward
		v.Accuracy.GapRefs, v.Accuracy.GapSample, v.Accuracy.Anchors = cr.Options.GapRefs, cr.Options.GapSample, cr.Options.Anchors
		v.Accuracy.HaveCriteriaOpt = true
	}
	figs, err := figures(res.PerK, res.VoteList, v.Ward)
	if err != nil {
		return err
	}
	v.Figures = figs
	a := &v.Accuracy
	a.K = res.K
	a.SilWidth = math.NaN()
	for _, s := range res.PerK {
		if s.K == res.K {
			a.SilWidth = s.SilhouetteHi - s.SilhouetteLo
		}
	}
	a.CoresetSize, a.CoresetWeight, a.SampleSize, a.CovRows = res.Sketch.CoresetSize, res.Sketch.CoresetWeight, res.Sketch.SampleSize, res.Sketch.CovRows
	if res.Rows > 0 {
		a.WeightRatio = res.Sketch.CoresetWeight / float64(res.Rows)
	}
	if a.CoresetSize > 0 {
		a.RowsPerCoreset = float64(res.Rows) / float64(a.CoresetSize)
	}
	tm := res.Timings
	stages := []stageRow{{Name: "open", Measured: tm.Open}, {Name: "probe", Measured: tm.Probe},
		{Name: "pass", Measured: tm.Pass}, {Name: "criteria", Measured: tm.Criteria}}
	if plan != nil {
		for i, p := range []float64{plan.Terms.Open, plan.Terms.Probe, plan.Terms.Pass, plan.Terms.Criteria} {
			stages[i].Predicted, stages[i].HasPrediction = p, true
		}
	}
	total := stageRow{Name: "total", Measured: tm.Open + tm.Probe + tm.Pass + tm.Criteria}
	if plan != nil {
		total.Predicted, total.HasPrediction = plan.Seconds, true
	}
	v.Stages = append(stages, total)
	// encoding/json escapes <, > and & (and U+2028/9), so the document cannot close the script
	// element it sits in.
	js, err := json.Marshal(res)
	if err != nil {
		return fmt.Errorf("report: encode the result: %w", err)
	}
	v.JSON = template.JS(js)
	var b bytes.Buffer
	if err := page.Execute(&b, v); err != nil {
		return fmt.Errorf("report: render: %w", err)
	}
	_, err = w.Write(b.Bytes())
	return err
}

// Write renders the report of res to path atomically: a failed run leaves no partial page behind.
func Write(path string, res *kgauge.Result, plan *cost.Prediction) error {
	var b bytes.Buffer
	if err := Render(&b, res, plan); err != nil {
		return err
	}
	if err := atomicfile.Write(path, 0o644, func(w io.Writer) error { _, err := w.Write(b.Bytes()); return err }); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	return nil
}

// foldRows is the longest list of files or columns the page shows unfolded.
const foldRows = 8

// now is the clock of the page's date; tests replace it.
var now = time.Now

// inputName names what was read: the one file or sketch, or the folder that holds all of them.
func inputName(res *kgauge.Result) string {
	var paths []string
	for _, f := range res.Files {
		paths = append(paths, f.Path)
	}
	paths = append(paths, res.Sketches...)
	switch len(paths) {
	case 0:
		return "no input recorded"
	case 1:
		return paths[0]
	}
	common := filepath.Dir(paths[0])
	for _, p := range paths[1:] {
		for common != "." && common != "/" && !strings.HasPrefix(p, common+string(filepath.Separator)) {
			common = filepath.Dir(common)
		}
	}
	if common == "." || common == "/" {
		return fmt.Sprintf("%s and %d more", paths[0], len(paths)-1)
	}
	return common
}

// inputCount says how many files and sketches were read.
func inputCount(res *kgauge.Result) string {
	var parts []string
	if n := len(res.Files); n > 0 || len(res.Sketches) == 0 {
		parts = append(parts, plural(n, "data file"))
	}
	if n := len(res.Sketches); n > 0 {
		parts = append(parts, plural(n, "saved sketch"))
	}
	return strings.Join(parts, " and ")
}

func plural(n int, what string) string {
	if n == 1 {
		return "1 " + what
	}
	if strings.HasSuffix(what, "sketch") {
		return fmt.Sprintf("%d %ses", n, what)
	}
	return fmt.Sprintf("%d %ss", n, what)
}

func num(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return fmt.Sprintf("%.5g", v)
}

func fixed(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return fmt.Sprintf("%.3f", v)
}

func bytesText(n int64) string {
	v := float64(n)
	for _, u := range []string{"B", "KiB", "MiB", "GiB"} {
		if v < 1024 {
			if u == "B" {
				return fmt.Sprintf("%d B", n)
			}
			return fmt.Sprintf("%.1f %s", v, u)
		}
		v /= 1024
	}
	return fmt.Sprintf("%.1f TiB", v)
}
