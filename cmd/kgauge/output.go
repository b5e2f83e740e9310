package main

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/sketch/reduce"
)

// printResult writes res as JSON or as the readable table.
// A failure to write stdout (a full disk behind "> file", a closed pipe) is an output error,
// exit 4.
func printResult(w io.Writer, res *kgauge.Result, asJSON, wide bool) error {
	var err error
	if asJSON {
		err = writeJSON(w, res)
	} else {
		err = writeTable(w, res, wide)
	}
	if err != nil {
		return &outputError{fmt.Errorf("writing the result to stdout: %w", err)}
	}
	return nil
}

// tableColumn is one column of the per-k table: its header (two lines), the criterion whose vote it
// shows (marked with *), and its value; interval is the half-width or bounds shown beside the
// value in the wide layout (nil for none).
type tableColumn struct {
	head     [2]string
	wide     [2]string // the header in the wide layout, when it differs
	crit     string
	value    func(s criteria.Scores) float64
	interval func(s criteria.Scores) (lo, hi float64, plusMinus bool)
}

var tableColumns = []tableColumn{
	{head: [2]string{"", "wcss"}, crit: "elbow", value: func(s criteria.Scores) float64 { return s.WCSS }},
	{head: [2]string{"", "silhouette"}, wide: [2]string{"", "silhouette (95% CI)"}, crit: "silhouette",
		value:    func(s criteria.Scores) float64 { return s.Silhouette },
		interval: func(s criteria.Scores) (float64, float64, bool) { return s.SilhouetteLo, s.SilhouetteHi, false }},
	{head: [2]string{"simpl.", "sil."}, crit: "simplified_silhouette", value: func(s criteria.Scores) float64 { return s.SimplifiedSilhouette }},
	{head: [2]string{"gap", "box"}, wide: [2]string{"gap", "box ± s"}, crit: "gap_box", value: func(s criteria.Scores) float64 { return s.GapBox },
		interval: func(s criteria.Scores) (float64, float64, bool) { return s.GapBoxS, 0, true }},
	{head: [2]string{"gap", "pca"}, wide: [2]string{"gap", "pca ± s"}, crit: "gap_pca", value: func(s criteria.Scores) float64 { return s.GapPCA },
		interval: func(s criteria.Scores) (float64, float64, bool) { return s.GapPCAS, 0, true }},
	{head: [2]string{"bic", "gmm"}, crit: "bic_gmm", value: func(s criteria.Scores) float64 { return s.BICGMM }},
	{head: [2]string{"aic", "gmm"}, crit: "aic_gmm", value: func(s criteria.Scores) float64 { return s.AICGMM }},
	{head: [2]string{"bic", "k-means"}, crit: "bic_kmeans", value: func(s criteria.Scores) float64 { return s.BICKMeans }},
	{head: [2]string{"icl", "gmm"}, crit: "icl_gmm", value: func(s criteria.Scores) float64 { return s.ICLGMM }},
	{head: [2]string{"ward", "jump"}, crit: "ward", value: func(s criteria.Scores) float64 { return s.WardJump }},
	{head: [2]string{"calinski-", "harabasz"}, crit: "calinski_harabasz", value: func(s criteria.Scores) float64 { return s.CalinskiHarabasz }},
	{head: [2]string{"davies-", "bouldin"}, crit: "davies_bouldin", value: func(s criteria.Scores) float64 { return s.DaviesBouldin }},
}

// sigDigits is the number of significant digits the per-k table gives the largest value of each
// column; the column's other values get the same decimals (or the same exponent notation).
const sigDigits = 4

// numFormat is one column's number format: fixed decimals, or scientific notation with a mantissa
// of sigDigits digits.
type numFormat struct {
	sci      bool
	decimals int
}

// columnFormat picks one format for all of vals (NaN and ±Inf are ignored): plain decimals when the
// largest magnitude lies in [1e-3, 1e6), giving it sigDigits significant digits, and scientific
// notation otherwise.
func columnFormat(vals []float64) numFormat {
	var big float64
	for _, v := range vals {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			big = max(big, math.Abs(v))
		}
	}
	if big == 0 {
		return numFormat{decimals: sigDigits - 1}
	}
	if big >= 1e6 || big < 1e-3 {
		return numFormat{sci: true, decimals: sigDigits - 1}
	}
	// The exponent of the largest value once rounded (999.96 has four digits before the point).
	e := int(math.Floor(math.Log10(big)))
	if r := math.Pow(10, float64(e+1)); big+0.5*math.Pow(10, float64(e+1-sigDigits)) >= r {
		e++
	}
	return numFormat{decimals: max(0, sigDigits-1-e)}
}

// format prints v in f; NaN and ±Inf are "-". Scientific notation is short: 1.348e6, -2.500e-5.
func (f numFormat) format(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "-"
	}
	if !f.sci {
		s := strconv.FormatFloat(v, 'f', f.decimals, 64)
		if strings.Trim(s, "-0.") == "" {
			s = strings.TrimPrefix(s, "-") // no "-0.000"
		}
		return s
	}
	s := strconv.FormatFloat(v, 'e', f.decimals, 64)
	mant, exp, _ := strings.Cut(s, "e")
	n, _ := strconv.Atoi(exp)
	return mant + "e" + strconv.Itoa(n)
}

// tableLine says which state of a lake table was read, such as
// "delta table lake/sales version 4: 2 of 6 stored data files live, 14 rows deleted".
func tableLine(t kgauge.TableInfo) string {
	state := ""
	switch {
	case t.Version != nil:
		state = fmt.Sprintf("version %d", *t.Version)
	case t.Snapshot != nil:
		state = fmt.Sprintf("snapshot %d", *t.Snapshot)
	}
	s := fmt.Sprintf("%s table %s %s: %d of %d stored data files live", t.Format, t.Path, state, t.LiveFiles, t.PresentFiles)
	if t.DeletedRows > 0 {
		s += fmt.Sprintf(", %d rows deleted", t.DeletedRows)
	}
	if t.Where != "" {
		s += ", where " + t.Where
	}
	return s + "\n"
}

// inputsText says what a result was computed from: "3 files", "2 saved sketches", "1 file and
// 1 saved sketch".
func inputsText(res *kgauge.Result) string {
	var parts []string
	if n := len(res.Files); n > 0 || len(res.Sketches) == 0 {
		parts = append(parts, plural(n, "file", "files"))
	}
	if n := len(res.Sketches); n > 0 {
		parts = append(parts, plural(n, "saved sketch", "saved sketches"))
	}
	return strings.Join(parts, " and ")
}

func plural(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return fmt.Sprintf("%d %s", n, many)
}

// writeTable writes the readable result. The per-k table fits 120 columns; wide adds the
// silhouette's interval and the gap statistic's s_k beside their values.
func writeTable(w io.Writer, res *kgauge.Result, wide bool) error {
	var b strings.Builder
	fmt.Fprintf(&b, "rows %d (skipped %d, probe %d) · %s · %s · scale %s · seed %d\n", res.Rows, res.SkippedRows,
		res.ProbeRows, plural(len(res.Columns), "column", "columns"), inputsText(res), res.Scaling.Method, res.Seed)
	for _, t := range res.Tables {
		b.WriteString(tableLine(t))
	}
	if r := res.Reduction; r != nil {
		how := "the leading principal components"
		if r.Method == reduce.MethodRandom {
			how = "a seeded random projection"
		}
		fmt.Fprintf(&b, "reduced: the criteria ran in %d dimensions, %s of the %d columns (--reduce)\n", r.To, how, r.From)
	}
	if len(res.Ignored) > 0 {
		names := make([]string, len(res.Ignored))
		for i, c := range res.Ignored {
			names[i] = inert(c.Name)
		}
		fmt.Fprintf(&b, "not used as features: %s\n", strings.Join(names, ", "))
	}
	if len(res.SkippedFiles) > 0 {
		fmt.Fprintf(&b, "SKIPPED %s, not in this result:\n", plural(len(res.SkippedFiles), "unreadable file", "unreadable files"))
		for _, s := range res.SkippedFiles {
			fmt.Fprintf(&b, "  %s: %s\n", inert(s.Path), inert(s.Reason))
		}
	}
	b.WriteString("\n")
	writePerK(&b, res, wide)
	b.WriteString("\n* marks the k each criterion votes for.")
	if !wide {
		b.WriteString(" --wide adds the silhouette's 95% interval and the gap's s_k.")
	}
	b.WriteString("\n\n")
	fmt.Fprintf(&b, "verdict: k = %d", res.K)
	if !res.Structure {
		b.WriteString(" (no cluster structure found)")
	}
	fmt.Fprintf(&b, " · confidence %s · agreement %s", share(res.Confidence), share(res.Agreement))
	if res.RunnerUp != nil {
		fmt.Fprintf(&b, " · runner-up k = %d", *res.RunnerUp)
	}
	b.WriteString("\n")
	if res.Unstable {
		alt := make([]string, len(res.Alternatives))
		for i, k := range res.Alternatives {
			alt[i] = fmt.Sprint(k)
		}
		fmt.Fprintf(&b, "  unstable: the evidence is split (a close second, or a confidence below 0.5); other candidates: k = %s; "+
			"another seed may name one of them\n", strings.Join(alt, ", "))
	}
	if res.Why != "" {
		fmt.Fprintf(&b, "  why: %s\n", res.Why)
	}
	if res.WhyRunnerUp != "" {
		fmt.Fprintf(&b, "  %s\n", res.WhyRunnerUp)
	}
	// One line per action: lake tables often have many skewed columns of one kind.
	var actions []string
	byAction := map[string][]string{}
	for _, c := range res.Skewed {
		if byAction[c.Action] == nil {
			actions = append(actions, c.Action)
		}
		byAction[c.Action] = append(byAction[c.Action], fmt.Sprintf("%s (%.1f)", c.Name, c.Skewness))
	}
	for _, a := range actions {
		fmt.Fprintf(&b, "  right-skewed columns (skewness): %s; done: %s\n", strings.Join(byAction[a], ", "), a)
	}
	if res.FarRows.Rule != "" {
		fmt.Fprintf(&b, "  far rows: %.1f%% of rows lie far from every centre (%s)\n", 100*res.FarRows.Share, res.FarRows.Rule)
	}
	if res.AtMaxK {
		fmt.Fprintf(&b, "  most criteria are still improving at --max-k %d: the best k may be larger; widen the range\n", res.MaxK)
	}
	if len(res.Agree) > 0 {
		fmt.Fprintf(&b, "  for k = %d: %s\n", res.K, strings.Join(res.Agree, ", "))
	}
	var other []string
	for _, v := range res.VoteList {
		if v.StillImproving {
			other = append(other, v.Criterion+" (still improving at max-k, no optimum in the range)")
		} else if v.Abstain {
			other = append(other, v.Criterion+" (abstains)")
		} else if v.K != res.K {
			other = append(other, fmt.Sprintf("%s (k = %d)", v.Criterion, v.K))
		}
	}
	if len(other) > 0 {
		fmt.Fprintf(&b, "  otherwise: %s\n", strings.Join(other, ", "))
	}
	b.WriteString("A cluster count is evidence for a person to review, not a fact.\n")
	_, err := io.WriteString(w, b.String())
	return err
}

// writePerK writes the per-k table: one row per k, one column per criterion, * on each
// criterion's vote, every column in one number format.
func writePerK(b *strings.Builder, res *kgauge.Result, wide bool) {
	tw := tabwriter.NewWriter(b, 0, 0, 1, ' ', tabwriter.AlignRight)
	// An interval or s_k is printed in its value's format: it reads in the same units.
	formats := make([]numFormat, len(tableColumns))
	for i, c := range tableColumns {
		var vals []float64
		for _, s := range res.PerK {
			vals = append(vals, c.value(s))
		}
		formats[i] = columnFormat(vals)
	}
	for line := 0; line < 2; line++ {
		cells := []string{[2]string{"", "k"}[line]}
		for _, c := range tableColumns {
			h := c.head[line]
			if wide && c.wide[1] != "" {
				h = c.wide[line]
			}
			cells = append(cells, h+" ")
		}
		fmt.Fprintln(tw, strings.Join(cells, "\t")+"\t")
	}
	for _, s := range res.PerK {
		cells := []string{fmt.Sprint(s.K)}
		for i, c := range tableColumns {
			v := formats[i].format(c.value(s))
			if wide && c.interval != nil && v != "-" {
				lo, hi, pm := c.interval(s)
				if pm {
					v += " ± " + formats[i].format(lo)
				} else {
					v += " (" + formats[i].format(lo) + "–" + formats[i].format(hi) + ")"
				}
			}
			if k := res.Votes[c.crit]; k != nil && *k == s.K {
				v += "*"
			} else {
				v += " "
			}
			cells = append(cells, v)
		}
		fmt.Fprintln(tw, strings.Join(cells, "\t")+"\t")
	}
	tw.Flush()
}

// share prints a share of 0..1 (agreement, confidence) as the JSON and the flags give it: 0.45.
func share(v float64) string {
	if math.IsNaN(v) {
		return "-"
	}
	return strconv.FormatFloat(v, 'f', 2, 64)
}
