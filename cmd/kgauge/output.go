package main

import (
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/criteria"
)

// printResult writes res as JSON or as the readable table.
func printResult(w io.Writer, res *kgauge.Result, asJSON bool) error {
	if asJSON {
		return writeJSON(w, res)
	}
	return writeTable(w, res)
}

// tableColumn is one column of the per-k table: its header, the criterion whose vote it shows
// (marked with *), and how to read the value.
type tableColumn struct {
	head      string
	criterion string
	value     func(s criteria.Scores) string
}

var tableColumns = []tableColumn{
	{"wcss", "elbow", func(s criteria.Scores) string { return num(s.WCSS, 4) }},
	{"silhouette (95% CI)", "silhouette", func(s criteria.Scores) string {
		if math.IsNaN(s.Silhouette) {
			return "-"
		}
		return fmt.Sprintf("%.3f (%.3f–%.3f)", s.Silhouette, s.SilhouetteLo, s.SilhouetteHi)
	}},
	{"simpl.sil", "simplified_silhouette", func(s criteria.Scores) string { return fixed(s.SimplifiedSilhouette, 3) }},
	{"gap box ± s", "gap_box", func(s criteria.Scores) string { return gap(s.GapBox, s.GapBoxS) }},
	{"gap pca ± s", "gap_pca", func(s criteria.Scores) string { return gap(s.GapPCA, s.GapPCAS) }},
	{"bic gmm", "bic_gmm", func(s criteria.Scores) string { return num(s.BICGMM, 6) }},
	{"aic gmm", "aic_gmm", func(s criteria.Scores) string { return num(s.AICGMM, 6) }},
	{"bic k-means", "bic_kmeans", func(s criteria.Scores) string { return num(s.BICKMeans, 6) }},
	{"ward jump", "ward", func(s criteria.Scores) string { return fixed(s.WardJump, 3) }},
	{"calinski-h.", "calinski_harabasz", func(s criteria.Scores) string { return num(s.CalinskiHarabasz, 5) }},
	{"davies-b.", "davies_bouldin", func(s criteria.Scores) string { return fixed(s.DaviesBouldin, 3) }},
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

func writeTable(w io.Writer, res *kgauge.Result) error {
	var b strings.Builder
	fmt.Fprintf(&b, "rows %d (skipped %d, probe %d) · %d columns · %d file(s)", res.Rows, res.SkippedRows,
		res.ProbeRows, len(res.Columns), len(res.Files))
	if len(res.Sketches) > 0 {
		fmt.Fprintf(&b, " · %d sketch(es)", len(res.Sketches))
	}
	fmt.Fprintf(&b, " · scale %s · seed %d\n", res.Scaling.Method, res.Seed)
	for _, t := range res.Tables {
		b.WriteString(tableLine(t))
	}
	if len(res.Ignored) > 0 {
		names := make([]string, len(res.Ignored))
		for i, c := range res.Ignored {
			names[i] = inert(c.Name)
		}
		fmt.Fprintf(&b, "not used as features: %s\n", strings.Join(names, ", "))
	}
	if len(res.SkippedFiles) > 0 {
		fmt.Fprintf(&b, "SKIPPED %d unreadable file(s), not in this result:\n", len(res.SkippedFiles))
		for _, s := range res.SkippedFiles {
			fmt.Fprintf(&b, "  %s: %s\n", inert(s.Path), inert(s.Reason))
		}
	}
	b.WriteString("\n")
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', tabwriter.AlignRight)
	heads := []string{"k"}
	for _, c := range tableColumns {
		heads = append(heads, c.head)
	}
	fmt.Fprintln(tw, strings.Join(heads, "\t")+"\t")
	for _, s := range res.PerK {
		cells := []string{fmt.Sprint(s.K)}
		for _, c := range tableColumns {
			v := c.value(s)
			if k := res.Votes[c.criterion]; k != nil && *k == s.K {
				v += "*"
			} else {
				v += " "
			}
			cells = append(cells, v)
		}
		fmt.Fprintln(tw, strings.Join(cells, "\t")+"\t")
	}
	tw.Flush()
	b.WriteString("\n* marks the k each criterion votes for.\n\n")
	fmt.Fprintf(&b, "verdict: k = %d", res.K)
	if !res.Structure {
		b.WriteString(" (no cluster structure found)")
	}
	fmt.Fprintf(&b, " · confidence %s · agreement %.0f%%", fixed(res.Confidence, 2), 100*res.Agreement)
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

func num(v float64, digits int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "-"
	}
	return fmt.Sprintf("%.*g", digits, v)
}

func fixed(v float64, digits int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "-"
	}
	return fmt.Sprintf("%.*f", digits, v)
}

func gap(v, s float64) string {
	if math.IsNaN(v) {
		return "-"
	}
	return fmt.Sprintf("%.3f ± %.3f", v, s)
}
