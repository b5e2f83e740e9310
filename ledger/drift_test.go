package ledger

import (
	"fmt"
	"math"
	"slices"
	"testing"
)

// hist builds records day=2026-11-01.. with the given k and WCSS per row at k 3 (rows 1000).
func hist(ks []int, w3 []float64) []Record {
	var h []Record
	for i, k := range ks {
		r := rec(fmt.Sprintf("day=2026-11-%02d", i+1), k)
		r.Rows = 1000
		r.PerK = []Scores{{K: 2, WCSS: 20000}, {K: 3, WCSS: Float(w3[i] * 1000)}, {K: 4, WCSS: Float(w3[i] * 900)}}
		h = append(h, r)
	}
	return h
}

func rules(window, minHist int, agree, rise float64) Rules {
	return Rules{Window: window, MinHistory: minHist, MinAgreement: agree, WCSSRise: rise}
}

func TestCheck(t *testing.T) {
	flat := []float64{10, 10.2, 9.8, 10.1, 9.9}
	for _, tc := range []struct {
		name      string
		rules     Rules
		history   []Record
		k         int
		w3        float64 // WCSS per row at k 3
		agreement float64
		wantRules []string
		wantK     int // window k, 0 = null
		wantWin   int
	}{
		{"Steady", rules(7, 3, 0.25, 0.1), hist([]int{3, 3, 3, 3, 3}, flat), 3, 10.3, 0.6, nil, 3, 5},
		{"KChanged", rules(7, 3, 0.25, 0.1), hist([]int{3, 3, 3, 3, 3}, flat), 4, 10, 0.6, []string{RuleKChanged}, 3, 5},
		{"WCSSRise", rules(7, 3, 0.25, 0.1), hist([]int{3, 3, 3, 3, 3}, flat), 3, 11.2, 0.6, []string{RuleWCSSRise}, 3, 5},
		// The median of 9.8, 9.9, 10, 10.1, 10.2 is 10; 11.0 is exactly +10 %, not more.
		{"WCSSAtLimit", rules(7, 3, 0.25, 0.1), hist([]int{3, 3, 3, 3, 3}, flat), 3, 11, 0.6, nil, 3, 5},
		{"WCSSRuleOff", rules(7, 3, 0.25, 0), hist([]int{3, 3, 3, 3, 3}, flat), 3, 50, 0.6, nil, 3, 5},
		{"LowAgreement", rules(7, 3, 0.25, 0.1), hist([]int{3, 3, 3, 3, 3}, flat), 3, 10, 0.2, []string{RuleLowAgreement}, 3, 5},
		{"AgreementRuleOff", rules(7, 3, 0, 0.1), hist([]int{3, 3, 3, 3, 3}, flat), 3, 10, 0.05, nil, 3, 5},
		{"All", rules(7, 3, 0.25, 0.1), hist([]int{3, 3, 3, 3, 3}, flat), 5, 13, 0.1,
			[]string{RuleLowAgreement, RuleKChanged, RuleWCSSRise}, 3, 5},
		// Too little history: only the agreement rule applies.
		{"ShortHistory", rules(7, 3, 0.25, 0.1), hist([]int{3, 3}, flat), 6, 20, 0.1, []string{RuleLowAgreement}, 0, 2},
		{"NoHistory", rules(7, 3, 0.25, 0.1), nil, 6, 20, 0.6, nil, 0, 0},
		// The window keeps the last 3: k 4, 4, 3 outvote the older 3s.
		{"WindowLimit", rules(3, 3, 0.25, 0.1), hist([]int{3, 3, 3, 4, 4, 3}, []float64{10, 10, 10, 10, 10, 10}), 3, 10, 0.6,
			[]string{RuleKChanged}, 4, 3},
		// A tie (3, 4, 4, 3) goes to the k of the latest partition.
		{"TieLatest", rules(4, 3, 0.25, 0.1), hist([]int{3, 4, 4, 3}, []float64{10, 10, 10, 10}), 3, 10, 0.6, nil, 3, 4},
		{"TieLatestOther", rules(4, 3, 0.25, 0.1), hist([]int{4, 3, 3, 4}, []float64{10, 10, 10, 10}), 3, 10, 0.6,
			[]string{RuleKChanged}, 4, 4},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r := rec("day=2026-12-01", tc.k)
			r.Rows = 2000 // a different size: the rule compares WCSS per row
			r.Agreement = tc.agreement
			r.PerK = []Scores{{K: 3, WCSS: Float(tc.w3 * 2000)}, {K: 4, WCSS: Float(tc.w3 * 1800)}}
			d := tc.rules.Check(tc.history, &r)
			var got []string
			for _, x := range d.Reasons {
				got = append(got, x.Rule)
				if x.Message == "" {
					t.Errorf("rule %s without a message", x.Rule)
				}
			}
			if !slices.Equal(got, tc.wantRules) || d.Drifted != (len(tc.wantRules) > 0) {
				t.Errorf("rules %v (drifted %v), want %v", got, d.Drifted, tc.wantRules)
			}
			if (d.WindowK == nil) != (tc.wantK == 0) || (d.WindowK != nil && *d.WindowK != tc.wantK) {
				t.Errorf("window k %v, want %d", d.WindowK, tc.wantK)
			}
			if len(d.Window) != tc.wantWin {
				t.Errorf("window %v, want %d partitions", d.Window, tc.wantWin)
			}
		})
	}
}

func TestCheckWindowSelection(t *testing.T) {
	h := hist([]int{3, 3, 3, 3, 3}, []float64{10, 10, 10, 10, 10})
	h[1].Columns = []string{"other"}  // different features: not comparable
	h[2].Scale = "range"              // different scaling: not comparable
	later := rec("day=2026-12-09", 7) // after the new partition: not in its window
	later.Rows = 1000
	h = append(h, later)
	r := rec("day=2026-12-01", 3)
	r.Rows = 1000
	r.PerK = []Scores{{K: 3, WCSS: 10000}}
	d := rules(7, 3, 0.25, 0.1).Check(h, &r)
	if want := []string{"day=2026-11-01", "day=2026-11-04", "day=2026-11-05"}; !slices.Equal(d.Window, want) {
		t.Errorf("window %v, want %v", d.Window, want)
	}
	if d.Drifted {
		t.Errorf("drifted: %v", d.Reasons)
	}
	if float64(d.WCSSPerRow) != 10 || float64(d.WindowWCSSPerRow) != 10 {
		t.Errorf("WCSS per row %v, window %v; want 10 and 10", d.WCSSPerRow, d.WindowWCSSPerRow)
	}

	// No WCSS at the window's k in the new record: the rule is not applied, the values stay null.
	r.PerK = nil
	d = rules(7, 3, 0.25, 0.1).Check(h, &r)
	if !math.IsNaN(float64(d.WCSSPerRow)) || d.Drifted {
		t.Errorf("without per-k scores: WCSS per row %v, drifted %v", d.WCSSPerRow, d.Drifted)
	}
}

func TestRulesValidate(t *testing.T) {
	if err := DefaultRules().Validate(); err != nil {
		t.Errorf("defaults: %v", err)
	}
	for _, r := range []Rules{rules(0, 1, 0.2, 0.1), rules(3, 4, 0.2, 0.1), rules(3, 0, 0.2, 0.1),
		rules(3, 3, 1.5, 0.1), rules(3, 3, math.NaN(), 0.1), rules(3, 3, 0.2, -1), rules(3, 3, 0.2, math.Inf(1))} {
		if err := r.Validate(); err == nil {
			t.Errorf("%+v: no error", r)
		}
	}
}
