package ledger

import (
	"fmt"
	"math"
	"slices"
	"sort"
)

// The drift rules, as named in Reason.Rule.
const (
	RuleKChanged     = "k_changed"
	RuleLowAgreement = "low_agreement"
	RuleWCSSRise     = "wcss_rise"
)

// Rules configures the drift check. The zero value is not useful; start from DefaultRules.
type Rules struct {
	Window       int     // earlier partitions compared with, at most
	MinHistory   int     // fewer comparable earlier partitions than this: no k or WCSS check
	MinAgreement float64 // agreement below this is drift; 0 turns the rule off
	WCSSRise     float64 // WCSS per row at the window's k rising by more than this share is drift; 0 turns it off
}

// Defaults of [Rules].
const (
	DefaultWindow       = 7
	DefaultMinHistory   = 3
	DefaultMinAgreement = 0.25
	DefaultWCSSRise     = 0.10
)

// DefaultRules returns the default drift rules.
func DefaultRules() Rules {
	return Rules{Window: DefaultWindow, MinHistory: DefaultMinHistory, MinAgreement: DefaultMinAgreement,
		WCSSRise: DefaultWCSSRise}
}

// Validate reports the first out-of-range rule, naming its flag.
func (r Rules) Validate() error {
	switch {
	case r.Window < 1:
		return fmt.Errorf("--window must be at least 1, got %d", r.Window)
	case r.MinHistory < 1 || r.MinHistory > r.Window:
		return fmt.Errorf("--min-history must be 1..--window (%d), got %d", r.Window, r.MinHistory)
	case !(r.MinAgreement >= 0 && r.MinAgreement <= 1):
		return fmt.Errorf("--min-agreement must be 0..1, got %v", r.MinAgreement)
	case !(r.WCSSRise >= 0) || math.IsInf(r.WCSSRise, 0):
		return fmt.Errorf("--wcss-rise must be 0 or more, got %v", r.WCSSRise)
	}
	return nil
}

// Drift is the drift verdict of one record.
type Drift struct {
	Drifted bool     `json:"drifted"`
	Reasons []Reason `json:"reasons"` // empty when not drifted
	Window  []string `json:"window"`  // partitions compared with, oldest first
	// WindowK is the most common k of the window, null when the window is shorter than MinHistory.
	WindowK *int `json:"window_k"`
	// WCSSPerRow is this partition's WCSS at WindowK divided by its rows; WindowWCSSPerRow is the
	// median of the same over the window. Null when not computed.
	WCSSPerRow       Float `json:"wcss_per_row"`
	WindowWCSSPerRow Float `json:"window_wcss_per_row"`
}

// Reason is one rule that fired.
type Reason struct {
	Rule    string `json:"rule"`
	Message string `json:"message"`
}

// Window returns the records rec is compared with: of the records in history whose partition key
// sorts before rec's and that have the same columns and scaling, the last r.Window in key order.
func (r Rules) window(history []Record, rec *Record) []*Record {
	var w []*Record
	for i := range history {
		h := &history[i]
		if h.Partition < rec.Partition && h.Scale == rec.Scale && slices.Equal(h.Columns, rec.Columns) {
			w = append(w, h)
		}
	}
	sort.SliceStable(w, func(i, j int) bool { return w[i].Partition < w[j].Partition })
	if len(w) > r.Window {
		w = w[len(w)-r.Window:]
	}
	return w
}

// Check compares rec with its window among history and returns the verdict:
//
//   - k_changed: rec's k differs from the most common k of the window (a tie goes to the k seen
//     in the latest partition among the tied);
//   - low_agreement: rec's agreement is below MinAgreement (checked even without history);
//   - wcss_rise: rec's WCSS per row at the window's k exceeds the window's median WCSS per row at
//     that k by more than the share WCSSRise. WCSS is divided by rows because it grows with them.
//
// The k and WCSS rules need at least MinHistory partitions in the window.
func (r Rules) Check(history []Record, rec *Record) Drift {
	d := Drift{Reasons: []Reason{}, Window: []string{}, WCSSPerRow: Float(math.NaN()),
		WindowWCSSPerRow: Float(math.NaN())}
	if r.MinAgreement > 0 && rec.Agreement < r.MinAgreement {
		d.Reasons = append(d.Reasons, Reason{RuleLowAgreement,
			fmt.Sprintf("agreement %.2f is below %.2f", rec.Agreement, r.MinAgreement)})
	}
	w := r.window(history, rec)
	for _, h := range w {
		d.Window = append(d.Window, h.Partition)
	}
	if len(w) >= r.MinHistory {
		k, n := modeK(w)
		d.WindowK = &k
		if rec.K != k {
			d.Reasons = append(d.Reasons, Reason{RuleKChanged,
				fmt.Sprintf("k %d differs from the window's k %d (%d of %d partitions)", rec.K, k, n, len(w))})
		}
		var ws []float64
		for _, h := range w {
			if v, ok := h.WCSSPerRow(k); ok {
				ws = append(ws, v)
			}
		}
		if v, ok := rec.WCSSPerRow(k); ok && len(ws) >= r.MinHistory {
			med := median(ws)
			d.WCSSPerRow, d.WindowWCSSPerRow = Float(v), Float(med)
			if r.WCSSRise > 0 && med > 0 && v > med*(1+r.WCSSRise) {
				d.Reasons = append(d.Reasons, Reason{RuleWCSSRise,
					fmt.Sprintf("WCSS per row at k %d is %.4g, %+.0f%% against the window median %.4g (limit +%.0f%%)",
						k, v, 100*(v/med-1), med, 100*r.WCSSRise)})
			}
		}
	}
	d.Drifted = len(d.Reasons) > 0
	return d
}

// modeK returns the most common k of w (oldest first) and its count; a tie goes to the k whose
// latest occurrence is latest.
func modeK(w []*Record) (k, count int) {
	counts := map[int]int{}
	last := map[int]int{}
	for i, h := range w {
		counts[h.K]++
		last[h.K] = i
	}
	best := -1
	for i := len(w) - 1; i >= 0; i-- { // deterministic: visit ks from the latest record back
		c := w[i].K
		if counts[c] > count || (counts[c] == count && last[c] > best) {
			k, count, best = c, counts[c], last[c]
		}
	}
	return k, count
}

func median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}
