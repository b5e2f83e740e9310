package bench

import (
	"context"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

// tinyAccuracy is a configuration small enough for a unit test: the machinery, not the numbers.
func tinyAccuracy() AccuracyConfig {
	return AccuracyConfig{Mode: "test", DataDirs: []string{"../testdata/refsets"}, Seed: 1,
		SilRows: 600, SilAnchors: []int{40, 400}, SilRepeats: 8, SilCoreset: 300, SilCoreReps: 1,
		CoreRows: 4000, CoreSizes: []int{200, 1600}, CoreRepeats: 2, Restarts: 2,
		GapRows: 1500, GapSizes: []int{100, 400}, GapBs: []int{5, 10}, GapRepeats: 1, GapLarge: 800, GapLargeB: 20, GapLargeRestarts: 2,
		GapExtraK: 2, GapWorkload: []string{"balanced-2d"},
		VerdictRows: 1500, VerdictSizes: []int{200, 800}, VerdictRepeats: 1, VerdictWorkload: []string{"balanced-2d"},
		Only: []string{"balanced-2d", "unbalanced-8d", "Ruspini"}}
}

func TestExactSilhouetteMatchesCriteria(t *testing.T) {
	for _, tc := range []struct {
		name    string
		d, k    int
		workers int
	}{{"2d k=3 one worker", 2, 3, 1}, {"5d k=4 three workers", 5, 4, 3}} {
		t.Run(tc.name, func(t *testing.T) {
			x, _ := synth.Mixture(synth.MixtureOptions{Rows: 400, Dims: tc.d, K: tc.k, Separation: 3, Elongation: 1, Seed: 9})
			p := kmeans.Data{X: x, D: tc.d}
			fit := kmeans.Fit(p, tc.k, kmeans.FitOptions{Restarts: 2, Rand: rand.New(rand.NewPCG(1, 2))})
			got := exactSilhouette(x, tc.d, fit.Labels, tc.k, tc.workers)
			want := criteria.SilhouetteExact(p, fit.Labels, tc.k)
			if math.Abs(got-want) > 1e-12 {
				t.Errorf("exactSilhouette = %.15f, criteria.SilhouetteExact = %.15f", got, want)
			}
		})
	}
}

func TestReadPointsReferenceSets(t *testing.T) {
	// Sizes as published (testdata/refsets/README.md; Fränti & Sieranoja 2018; Ruspini 1970).
	for _, tc := range []struct {
		name string
		n, d int
	}{{"S1", 5000, 2}, {"A1", 3000, 2}, {"DIM032", 1024, 32}, {"Ruspini", 75, 2}} {
		t.Run(tc.name, func(t *testing.T) {
			w, err := reference(tc.name, []string{"../testdata/refsets"})
			if err != nil {
				t.Fatal(err)
			}
			if w.N != tc.n || w.D != tc.d {
				t.Errorf("%s: %d × %d, want %d × %d", tc.name, w.N, w.D, tc.n, tc.d)
			}
		})
	}
	if _, err := reference("S1", []string{t.TempDir()}); err == nil || !strings.Contains(err.Error(), "s1.txt") {
		t.Errorf("missing set: error %v, want one naming s1.txt", err)
	}
	bad := filepath.Join(t.TempDir(), "s1.txt")
	if err := os.WriteFile(bad, []byte("1 2\n3 x\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := reference("S1", []string{filepath.Dir(bad)}); err == nil || !strings.Contains(err.Error(), "line 2") {
		t.Errorf("bad number: error %v, want one naming line 2", err)
	}
}

func TestStatOf(t *testing.T) {
	v := make([]float64, 100)
	for i := range v {
		v[len(v)-1-i] = float64(i + 1) // unsorted on purpose
	}
	s := statOf(v)
	if s.Mean != 50.5 || s.P95 != 95 {
		t.Errorf("statOf(1..100) = %+v, want mean 50.5, p95 95", s)
	}
	if s := statOf(nil); !math.IsNaN(s.Mean) || !math.IsNaN(s.P95) {
		t.Errorf("statOf(nil) = %+v, want NaN", s)
	}
}

func TestGapOf(t *testing.T) {
	// Hand-checked: ln W of the data 0, 0; of two references (1, 2) and (3, 2). Means (2, 2), so
	// Gap = (2, 2); sd (divisor B) = (1, 0), s = sd sqrt(1 + 1/2). Gap(1) >= Gap(2) - s(2): k = 1.
	gap, s, k := gapOf([]float64{0, 0}, [][]float64{{1, 2}, {3, 2}}, 2)
	if gap[0] != 2 || gap[1] != 2 || math.Abs(s[0]-math.Sqrt(1.5)) > 1e-15 || s[1] != 0 || k != 1 {
		t.Errorf("gapOf = %v %v %d, want [2 2] [%.4f 0] 1", gap, s, k, math.Sqrt(1.5))
	}
	// Only the first B references count.
	gap, _, _ = gapOf([]float64{0, 0}, [][]float64{{1, 2}, {3, 2}}, 1)
	if gap[0] != 1 {
		t.Errorf("B=1: Gap(1) = %v, want 1", gap[0])
	}
}

func TestAccuracyConfigValidate(t *testing.T) {
	for _, tc := range []struct {
		name string
		edit func(*AccuracyConfig)
		want string
	}{
		{"ok", func(*AccuracyConfig) {}, ""},
		{"no anchors", func(c *AccuracyConfig) { c.SilAnchors = nil }, "silhouette anchors"},
		{"zero size", func(c *AccuracyConfig) { c.CoreSizes = []int{0} }, "coreset sizes"},
		{"repeats", func(c *AccuracyConfig) { c.GapRepeats = 0 }, "gap repeats"},
		{"workers", func(c *AccuracyConfig) { c.Workers = -1 }, "workers"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := QuickAccuracy()
			tc.edit(&c)
			err := c.Validate()
			if (err == nil) != (tc.want == "") || (err != nil && !strings.Contains(err.Error(), tc.want)) {
				t.Errorf("Validate() = %v, want an error naming %q", err, tc.want)
			}
		})
	}
	if err := FullAccuracy().Validate(); err != nil {
		t.Errorf("FullAccuracy: %v", err)
	}
}

// TestAccuracyMachinery runs every experiment on tiny sizes and checks loose properties of the
// results, their independence from the number of workers, and the report files.
func TestAccuracyMachinery(t *testing.T) {
	cfg := tinyAccuracy()
	cfg.Workers = 2
	a, err := RunAccuracy(context.Background(), cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(a.Silhouette) == 0 || len(a.Coreset) == 0 || len(a.Gap) == 0 || len(a.GapLarge) == 0 || len(a.Verdict) == 0 {
		t.Fatalf("empty tables: %d silhouette, %d coreset, %d gap, %d large, %d verdict rows",
			len(a.Silhouette), len(a.Coreset), len(a.Gap), len(a.GapLarge), len(a.Verdict))
	}

	// Silhouette: pooled mean error at 400 anchors below that at 40; intervals cover often.
	errAt := func(m int) (e float64, cover float64, n int) {
		for _, s := range a.Silhouette {
			if s.Series == "all rows" && s.M == m {
				e += s.AbsErr.Mean
				cover += s.Coverage
				n++
			}
		}
		return e / float64(n), cover / float64(n), n
	}
	e40, c40, n40 := errAt(40)
	e400, _, n400 := errAt(400)
	if n40 == 0 || n400 == 0 || !(e400 < e40) {
		t.Errorf("silhouette error at 400 anchors %.4g (%d workloads), at 40 %.4g (%d): want it to shrink", e400, n400, e40, n40)
	}
	if !(c40 >= 0.5) {
		t.Errorf("silhouette 95%% interval coverage at 40 anchors %.2f, want at least 0.5", c40)
	}

	// Coreset: WCSS error shrinks with size; on the small distant clusters the uniform sample of the
	// smallest size errs more than the coreset (sketch package doc; Bachem, Lucic & Krause 2018).
	wcss := func(summary string, m int, workload string) float64 {
		for _, c := range a.Coreset {
			if c.Summary == summary && c.M == m && c.Workload == workload {
				return c.WCSS.Mean
			}
		}
		t.Fatalf("no coreset row %s m=%d %s", summary, m, workload)
		return 0
	}
	if small, large := wcss("coreset", 200, "balanced-2d"), wcss("coreset", 1600, "balanced-2d"); !(large < small) {
		t.Errorf("balanced-2d coreset WCSS error %.4g at 1600, %.4g at 200: want it to shrink", large, small)
	}
	if c, u := wcss("coreset", 200, "unbalanced-8d"), wcss("uniform", 200, "unbalanced-8d"); !(c < u) {
		t.Errorf("unbalanced-8d at 200: coreset WCSS error %.4g, uniform %.4g: want the coreset's smaller", c, u)
	}
	for _, v := range a.Verdict {
		if v.Runs != cfg.VerdictRepeats || v.Differs < 0 || v.Differs > 1 {
			t.Errorf("verdict row %+v: want %d runs and a share in [0, 1]", v, cfg.VerdictRepeats)
		}
	}

	// The same configuration on one worker gives the same numbers.
	cfg.Workers = 1
	b, err := RunAccuracy(context.Background(), cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(a.Silhouette, b.Silhouette) || !reflect.DeepEqual(a.Coreset, b.Coreset) ||
		!reflect.DeepEqual(a.Gap, b.Gap) || !reflect.DeepEqual(a.Verdict, b.Verdict) {
		t.Error("results differ between 2 workers and 1")
	}

	dir := t.TempDir()
	if err := WriteAccuracyReport(dir, a, "go test"); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"ACCURACY.md", "silhouette.csv", "coreset.csv", "gap.csv", "gap_large.csv", "verdict.csv",
		"silhouette.png", "coreset_wcss.png", "coreset_excess.png", "gap.png", "verdict.png"} {
		if st, err := os.Stat(filepath.Join(dir, f)); err != nil || st.Size() == 0 {
			t.Errorf("report file %s: %v", f, err)
		}
	}
	md, _ := os.ReadFile(filepath.Join(dir, "ACCURACY.md"))
	for _, want := range []string{"## Rules and the defaults they give", "`--anchors`", "`--coreset`", "go test"} {
		if !strings.Contains(string(md), want) {
			t.Errorf("ACCURACY.md lacks %q", want)
		}
	}
	saved := filepath.Join(dir, "res.gob")
	if err := SaveAccuracy(saved, a); err != nil {
		t.Fatal(err)
	}
	if back, err := LoadAccuracy(saved); err != nil || !reflect.DeepEqual(back.Coreset, a.Coreset) {
		t.Errorf("LoadAccuracy after SaveAccuracy: %v, equal %v", err, err == nil && reflect.DeepEqual(back.Coreset, a.Coreset))
	}
}
