package bench

import (
	"context"
	"fmt"
	"io"
	"math"
	"runtime"
	"slices"
	"sync"
	"time"

	"gonum.org/v1/gonum/stat"
)

// AccuracyConfig sets the workloads, sizes and repeats of an accuracy run. [QuickAccuracy] and
// [FullAccuracy] give the two standard settings.
type AccuracyConfig struct {
	Mode     string   // "quick" or "full"; recorded in the report
	DataDirs []string // folders searched, in order, for the reference sets; a set found in none is skipped
	Workers  int      // goroutines; 0 means GOMAXPROCS. Results do not depend on it
	Seed     uint64   // base of every seed

	// Silhouette: anchors against the exact mean silhouette.
	SilRows     int   // rows of the synthetic workloads
	SilBigRows  int   // rows of the one large run (balanced 16-d); 0 skips it
	SilBigReps  int   // anchor draws per m of the large run
	SilAnchors  []int // anchor counts m
	SilRepeats  int   // anchor draws per (workload, m)
	SilCoreset  int   // coreset size of the "anchors on the coreset" series (kgauge's path)
	SilCoreReps int   // sketch seeds of that series

	// Coreset: WCSS, BIC and excess cost against all rows.
	CoreRows    int   // rows of the synthetic workloads
	CoreSizes   []int // coreset (and uniform sample) sizes m
	CoreRepeats int   // sketch seeds per (workload, m)
	Restarts    int   // k-means++ restarts of every fit, on the summary and on all rows

	// Gap statistic: reference size and B against a large run.
	GapRows    int
	GapSizes   []int // points per reference set (and on the data side)
	GapBs      []int // B
	GapRepeats int
	GapLarge   int // points per set of the large run
	GapLargeB  int // B of the large run
	// GapLargeRestarts are the k-means++ starts of every fit of the large run; the grid uses
	// Evaluate's default (criteria.DefaultOptions().GapRestarts), so a local optimum it falls into
	// counts as accuracy given up.
	GapLargeRestarts int
	GapExtraK        int // k range is 1..K+GapExtraK
	GapWorkload      []string

	// Verdict: sketch verdict against the verdict on all rows.
	VerdictRows     int
	VerdictSizes    []int
	VerdictRepeats  int
	VerdictWorkload []string // synthetic and reference workloads of the verdict experiment

	// Only, when not empty, restricts every experiment to the named workloads (tests use it).
	Only []string
}

// QuickAccuracy returns the settings of the quick mode: every experiment on small sizes and few
// repeats, in about two minutes on two cores. Its numbers show the machinery works, not the
// defaults.
func QuickAccuracy() AccuracyConfig {
	return AccuracyConfig{Mode: "quick", DataDirs: defaultDataDirs(), Seed: 1,
		SilRows: 3000, SilBigReps: 1, SilAnchors: []int{250, 500, 1000}, SilRepeats: 8, SilCoreset: 2000, SilCoreReps: 2,
		CoreRows: 12000, CoreSizes: []int{1000, 2000, 4000}, CoreRepeats: 3, Restarts: 3,
		GapRows: 6000, GapSizes: []int{500, 1000}, GapBs: []int{5, 10}, GapRepeats: 2, GapLarge: 2000, GapLargeB: 20, GapLargeRestarts: 3,
		GapExtraK: 3, GapWorkload: []string{"demo-loads", "elongated-8d"},
		VerdictRows: 6000, VerdictSizes: []int{1000, 2000}, VerdictRepeats: 2,
		VerdictWorkload: []string{"demo-loads", "unbalanced-8d", "S1"}}
}

// FullAccuracy returns the settings of the full mode, the one the committed report comes from
// (about 20 minutes on two shared cores).
func FullAccuracy() AccuracyConfig {
	return AccuracyConfig{Mode: "full", DataDirs: defaultDataDirs(), Seed: 1,
		SilRows: 10000, SilBigRows: 50000, SilBigReps: 4, SilAnchors: []int{250, 500, 1000, 2000, 5000, 10000},
		SilRepeats: 10, SilCoreset: 8192, SilCoreReps: 3,
		CoreRows: 50000, CoreSizes: []int{1000, 2000, 4000, 8192, 16384}, CoreRepeats: 6, Restarts: 3,
		GapRows: 20000, GapSizes: []int{500, 1000, 2000, 4000}, GapBs: []int{5, 10, 20, 50}, GapRepeats: 2,
		GapLarge: 8000, GapLargeB: 100, GapLargeRestarts: 3, GapExtraK: 3,
		GapWorkload: []string{"demo-loads", "balanced-8d", "elongated-8d"},
		VerdictRows: 20000, VerdictSizes: []int{1000, 2000, 4000, 8192, 16384}, VerdictRepeats: 2,
		VerdictWorkload: []string{"demo-loads", "balanced-16d", "unbalanced-8d", "elongated-8d", "mixed-scales-16d", "S1", "Unbalance"}}
}

// defaultDataDirs are the reference-set folders relative to the repository root.
func defaultDataDirs() []string { return []string{"testdata/refsets", "../shared/data"} }

// Validate reports the first bad setting, naming it.
func (c AccuracyConfig) Validate() error {
	pos := func(name string, v int) error {
		if v < 1 {
			return fmt.Errorf("bench: %s must be at least 1, got %d", name, v)
		}
		return nil
	}
	list := func(name string, v []int) error {
		if len(v) == 0 {
			return fmt.Errorf("bench: %s is empty", name)
		}
		for _, x := range v {
			if x < 1 {
				return fmt.Errorf("bench: %s holds %d, want positive sizes", name, x)
			}
		}
		return nil
	}
	for _, err := range []error{
		pos("silhouette rows", c.SilRows), list("silhouette anchors", c.SilAnchors), pos("silhouette repeats", c.SilRepeats),
		pos("silhouette coreset", c.SilCoreset), pos("silhouette coreset repeats", c.SilCoreReps),
		pos("coreset rows", c.CoreRows), list("coreset sizes", c.CoreSizes), pos("coreset repeats", c.CoreRepeats),
		pos("restarts", c.Restarts),
		pos("gap rows", c.GapRows), list("gap sizes", c.GapSizes), list("gap B", c.GapBs), pos("gap repeats", c.GapRepeats),
		pos("gap large size", c.GapLarge), pos("gap large B", c.GapLargeB), pos("gap large restarts", c.GapLargeRestarts), pos("gap extra k", c.GapExtraK),
		pos("verdict rows", c.VerdictRows), list("verdict sizes", c.VerdictSizes), pos("verdict repeats", c.VerdictRepeats),
	} {
		if err != nil {
			return err
		}
	}
	if c.Workers < 0 {
		return fmt.Errorf("bench: workers must not be negative, got %d", c.Workers)
	}
	return nil
}

// Accuracy is the outcome of [RunAccuracy].
type Accuracy struct {
	Config     AccuracyConfig
	Workloads  []WorkloadInfo
	Skipped    []string // reference sets not found, with the folders searched
	Silhouette []SilRow
	Coreset    []CoreRow
	Gap        []GapRow
	GapLarge   []GapLargeRow
	Verdict    []VerdictRow
	Seconds    map[string]float64 // wall-clock seconds per experiment
	Total      float64
}

// Summary statistics of one cell: mean and 95th percentile over runs.
type Stat struct {
	Mean, P95 float64
}

// statOf returns the mean and the empirical 95th percentile of v (NaN for no values).
func statOf(v []float64) Stat {
	if len(v) == 0 {
		return Stat{math.NaN(), math.NaN()}
	}
	s := slices.Clone(v)
	slices.Sort(s)
	return Stat{Mean: stat.Mean(s, nil), P95: stat.Quantile(0.95, stat.Empirical, s, nil)}
}

// parallel runs job(i) for i in 0..n-1 on workers goroutines; results must be stored by index.
func parallel(ctx context.Context, n, workers int, job func(i int)) error {
	if workers < 1 {
		workers = 1
	}
	next := make(chan int)
	var wg sync.WaitGroup
	for range min(workers, max(n, 1)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				if ctx.Err() == nil {
					job(i)
				}
			}
		}()
	}
	for i := range n {
		next <- i
	}
	close(next)
	wg.Wait()
	return ctx.Err()
}

// seedOf mixes the parts of a seed (splitmix64 steps), so every (experiment, workload, repeat)
// draws from its own stream.
func seedOf(parts ...uint64) uint64 {
	z := uint64(0x6b67617567652d62)
	for _, p := range parts {
		z += p + 0x9e3779b97f4a7c15
		z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
		z = (z ^ (z >> 27)) * 0x94d049bb133111eb
		z ^= z >> 31
	}
	return z
}

// RunAccuracy runs every accuracy experiment of cfg. Progress lines go to log (may be nil).
func RunAccuracy(ctx context.Context, cfg AccuracyConfig, log io.Writer) (*Accuracy, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	if cfg.Workers == 0 {
		cfg.Workers = runtime.GOMAXPROCS(0)
	}
	if log == nil {
		log = io.Discard
	}
	start := time.Now()
	res := &Accuracy{Config: cfg, Seconds: map[string]float64{}}
	steps := []struct {
		name string
		run  func(context.Context, AccuracyConfig, *Accuracy, io.Writer) error
	}{
		{"silhouette", runSilhouette},
		{"coreset", runCoreset},
		{"gap", runGap},
		{"verdict", runVerdict},
	}
	for _, s := range steps {
		t := time.Now()
		fmt.Fprintf(log, "bench: %s ...\n", s.name)
		if err := s.run(ctx, cfg, res, log); err != nil {
			return nil, fmt.Errorf("bench: %s: %w", s.name, err)
		}
		res.Seconds[s.name] = time.Since(t).Seconds()
		fmt.Fprintf(log, "bench: %s done in %.0f s\n", s.name, res.Seconds[s.name])
	}
	res.Total = time.Since(start).Seconds()
	return res, nil
}

// noteWorkload records a workload's description once.
func (a *Accuracy) noteWorkload(experiment string, w *Workload) {
	info := w.Info()
	info.Experiment = experiment
	for _, x := range a.Workloads {
		if x == info {
			return
		}
	}
	a.Workloads = append(a.Workloads, info)
}

// noteSkipped records missing reference sets once.
func (a *Accuracy) noteSkipped(s []string) {
	for _, x := range s {
		if !slices.Contains(a.Skipped, x) {
			a.Skipped = append(a.Skipped, x)
		}
	}
}
