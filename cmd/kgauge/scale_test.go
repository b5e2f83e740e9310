package main

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// TestScaleLog checks --scale log and auto end to end on invented data: right-skewed positive
// columns are reported, and log-scaled by both (a log-normal column's logarithm is symmetric), so
// that the one log-normal cloud is one group; a column holding a value <= 0 is refused by --scale
// log with exit code 3 and a one-line error naming it, and left as it is by auto.
func TestScaleLog(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(4, 2))
	n := 3000
	x := series(n, func(int) float64 { return math.Exp(rng.NormFloat64()) })
	y := series(n, func(int) float64 { return math.Exp(rng.NormFloat64()) })
	pos := filepath.Join(dir, "amounts.parquet")
	xyParquet(t, pos, x, y, -1)

	for _, tc := range []struct {
		scale, action string
	}{{"zscore", "--scale log would take logarithms first"}, {"log", "log-scaled"}, {"auto", "log-scaled: its logarithm is close to symmetric"}} {
		code, out, errOut := run(t, "estimate", "--json", "--quiet", "--max-k", "6", "--scale", tc.scale, pos)
		if code != 0 {
			t.Fatalf("--scale %s: exit %d: %s", tc.scale, code, errOut)
		}
		var res struct {
			K         int  `json:"k"`
			Structure bool `json:"structure"`
			Skewed    []struct {
				Name     string  `json:"name"`
				Skewness float64 `json:"skewness"`
				Action   string  `json:"action"`
			} `json:"skewed_columns"`
			Scaling struct {
				Method string `json:"method"`
				Logged []bool `json:"logged"`
			} `json:"scaling"`
		}
		if err := json.Unmarshal([]byte(out), &res); err != nil {
			t.Fatal(err)
		}
		// Log-normal(0, 1) has skewness (e+2) sqrt(e-1) = 6.2 (a textbook formula); samples of
		// 3000 rows land well above the limit of 1.
		if len(res.Skewed) != 2 || res.Skewed[0].Name != "x" || res.Skewed[0].Skewness < 2 ||
			!strings.Contains(res.Skewed[0].Action, tc.action) {
			t.Errorf("--scale %s: skewed columns %+v, want x and y with action %q", tc.scale, res.Skewed, tc.action)
		}
		logged := []bool{true, true}
		if tc.scale == "zscore" {
			logged = nil
		}
		if res.Scaling.Method != tc.scale || !slices.Equal(res.Scaling.Logged, logged) {
			t.Errorf("--scale %s: scaling %+v", tc.scale, res.Scaling)
		}
		// One log-normal cloud is one group once its logarithm is taken (under zscore this file
		// was called 3 groups when the test was written).
		if tc.scale != "zscore" && (res.K != 1 || res.Structure) {
			t.Errorf("--scale %s: k = %d, structure %v; want one group", tc.scale, res.K, res.Structure)
		}
	}

	y[17] = 0
	zero := filepath.Join(dir, "with-zero.parquet")
	xyParquet(t, zero, x, y, -1)
	code, _, errOut := run(t, "estimate", "--quiet", "--max-k", "6", "--scale", "log", zero)
	if code != 3 || !strings.Contains(errOut, `column "y"`) || strings.Count(strings.TrimSpace(errOut), "\n") != 0 {
		t.Errorf("--scale log with a zero: exit %d, stderr %q; want 3 and one line naming column y", code, errOut)
	}
	// --scale auto takes what it can: x's logarithm, y as it is.
	code, out, errOut := run(t, "estimate", "--json", "--quiet", "--max-k", "6", "--scale", "auto", zero)
	if code != 0 {
		t.Fatalf("--scale auto with a zero: exit %d: %s", code, errOut)
	}
	var res struct {
		Skewed []struct {
			Name   string `json:"name"`
			Action string `json:"action"`
		} `json:"skewed_columns"`
		Scaling struct {
			Logged []bool `json:"logged"`
		} `json:"scaling"`
	}
	if err := json.Unmarshal([]byte(out), &res); err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(res.Scaling.Logged, []bool{true, false}) || len(res.Skewed) != 2 ||
		!strings.Contains(res.Skewed[1].Action, "values <= 0") {
		t.Errorf("--scale auto with a zero in y: logged %v, skewed %+v; want x logged, y not, and said why", res.Scaling.Logged, res.Skewed)
	}
}
