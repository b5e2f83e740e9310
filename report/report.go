package report

import (
	"bytes"
	_ "embed"
	"encoding/json"
	"fmt"
	"html/template"
	"io"
	"math"
	"sort"
	"strings"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/model"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/atomicfile"
)

//go:embed page.html.tmpl
var pageText string

var page = template.Must(template.New("page").Funcs(template.FuncMap{
	"num":     num,
	"fixed":   fixed,
	"pct":     func(v float64) string { return fmt.Sprintf("%.0f%%", 100*v) },
	"bytes":   bytesText,
	"bytesf":  func(v float64) string { return bytesText(int64(v)) },
	"seconds": func(v float64) string { return fmt.Sprintf("%.3f", v) },
	"join":    strings.Join,
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
	R        *kgauge.Result
	Caution  string
	RunnerUp string
	Votes    []voteRow
	Figures  []Figure
	Ward     criteria.Ward
	Accuracy accuracy
	Plan     *model.Prediction
	Stages   []stageRow
	JSON     template.JS
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
func Render(w io.Writer, res *kgauge.Result, plan *model.Prediction) error {
	if res == nil {
		return fmt.Errorf("report: no result")
	}
	v := view{R: res, Caution: Caution, RunnerUp: "none", Plan: plan}
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
func Write(path string, res *kgauge.Result, plan *model.Prediction) error {
	var b bytes.Buffer
	if err := Render(&b, res, plan); err != nil {
		return err
	}
	if err := atomicfile.Write(path, 0o644, func(w io.Writer) error { _, err := w.Write(b.Bytes()); return err }); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	return nil
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
