package bench

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"time"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/criteria"
)

// The calibration grid: every criterion's vote on data with a known k, run through the same path as
// the CLI (a probe, sketch.Add in units, kgauge.Summarize, criteria.Evaluate), from which the vote
// weights and the confidence calibration of criteria.Decide are derived (DeriveWeights).

// GridConfig sizes the grid.
type GridConfig struct {
	DataDirs  []string // where the reference sets are (testdata/refsets first)
	Reps      int      // realizations of each Tibshirani scenario
	Seeds     int      // seeds 1..Seeds for the seed-stability runs
	SeedSets  []string // reference sets run with every seed
	Refs      []string // reference sets run once (seed 1)
	Mixtures  bool     // the generated mixture grid
	MixReps   int      // realizations of each generated mixture design
	Shapes    bool     // the one-cluster shapes
	Rows      int      // rows of each generated data set
	Coreset   int      // coreset size of every run (the sample keeps its default)
	Workers   int
	Seed      uint64
	MaxK      int // --max-k of every run, raised to k+5 where the true k needs it
	QuickName string
	Scale     kgauge.Scale // the scaling of every run; kgauge's default when empty
}

// FullGrid is the committed grid (bench/report/CALIBRATION.md).
func FullGrid() GridConfig {
	return GridConfig{DataDirs: []string{"../testdata/refsets", "../../shared/data"}, Reps: 10, Seeds: 10,
		SeedSets: []string{"S4", "A1", "Unbalance"},
		Refs:     []string{"S1", "S2", "S3", "DIM032", "DIM064", "Ruspini"},
		Mixtures: true, MixReps: 2, Shapes: true, Rows: 3000, Coreset: 2000, Workers: 2, Seed: 12, MaxK: 20}
}

// QuickGrid is a grid small enough for `go test ./bench/`: the machinery, not the numbers.
func QuickGrid() GridConfig {
	return GridConfig{DataDirs: []string{"../testdata/refsets"}, Reps: 1, Seeds: 2, SeedSets: nil,
		Refs: []string{"Ruspini"}, Rows: 600, Coreset: 400, Workers: 2, Seed: 12, MaxK: 8, Shapes: true, QuickName: "quick"}
}

// GridRun is one run of the grid: the data set, the seed and every vote.
type GridRun struct {
	Case    string             `json:"case"`   // data set name (a realization, not a seed)
	Family  string             `json:"family"` // scenario, reference, mixture, one-cluster
	Stable  bool               `json:"seed_run,omitempty"`
	K       int                `json:"k"` // the true or published k
	MaxK    int                `json:"max_k"`
	Seed    uint64             `json:"seed"`
	Votes   map[string]int     `json:"votes"` // 0 = abstained
	Modes   criteria.ModeCheck `json:"one_mode_check"`
	Seconds float64            `json:"seconds"`
	Rows    float64            `json:"rows"`             // rows summarised (Summary.N)
	Points  int                `json:"points,omitempty"` // coreset points (Summary.Coreset.Len()); 0 in runs stored before it was kept
	Dims    int                `json:"dims"`             // columns (Summary.D)
	// PerK holds every criterion's score at each k of the run, so the grid can be voted again when
	// a voting rule changes (Revote) without running it again.
	PerK []criteria.Scores `json:"per_k,omitempty"`
}

// Revote recasts the run's votes from its stored per-k scores with the current voting rules
// (criteria.VotesOf; Ward's k is the one stored). Runs without scores keep their votes.
func (r *GridRun) Revote() {
	if len(r.PerK) == 0 {
		return
	}
	opt := criteria.DefaultOptions()
	opt.MinK, opt.MaxK = r.PerK[0].K, r.PerK[len(r.PerK)-1].K
	r.setVotes(criteria.VotesOf(r.PerK, r.Votes[criteria.NameWard], r.Rows, r.Points, r.Dims, opt))
}

// setVotes stores vs in r.Votes: a criterion still improving at max-k is recorded as max-k (Decide
// reads it as "still improving"), an abstention as 0.
func (r *GridRun) setVotes(vs []criteria.Vote) {
	r.Votes = map[string]int{}
	for _, v := range vs {
		r.Votes[v.Criterion] = v.K
		if v.StillImproving {
			r.Votes[v.Criterion] = r.MaxK
		}
	}
}

// gridCase is a data set to run.
type gridCase struct {
	name, family string
	k, maxK      int
	seeds        []uint64
	stable       bool // the extra seeds are seed-stability runs
	w            *Workload
}

// referenceGrid lists the published sets of the grid with their published k (provenance in
// testdata/refsets/README.md).
var referenceGrid = map[string]refSet{
	"S1": {"S1", "s1.txt", 15}, "S2": {"S2", "s2.txt", 15}, "S3": {"S3", "s3.txt", 15}, "S4": {"S4", "s4.txt", 15},
	"A1": {"A1", "a1.txt", 20}, "DIM032": {"DIM032", "dim032.txt", 16}, "DIM064": {"DIM064", "dim064.txt", 16},
	"Unbalance": {"Unbalance", "unbalance.txt", 8}, "Ruspini": {"Ruspini", "ruspini.csv", 4},
}

func loadRef(name string, dirs []string) (*Workload, error) {
	r, ok := referenceGrid[name]
	if !ok {
		return nil, fmt.Errorf("bench: unknown reference set %q", name)
	}
	for _, dir := range dirs {
		path := filepath.Join(dir, r.file)
		if _, err := os.Stat(path); err != nil {
			continue
		}
		x, d, err := readPoints(path)
		if err != nil {
			return nil, err
		}
		w := &Workload{Name: name, Kind: "reference", K: r.k, D: d, X: x, Source: path}
		return w.finish(seedOf(99, uint64(len(name)))), nil
	}
	return nil, fmt.Errorf("bench: reference set %s (%s) not found", name, r.file)
}

// gridCases builds the data sets of cfg.
func gridCases(cfg GridConfig) ([]gridCase, error) {
	var cs []gridCase
	seeds := func(n int) []uint64 {
		s := make([]uint64, n)
		for i := range s {
			s[i] = uint64(i + 1)
		}
		return s
	}
	maxK := func(k int) int { return max(cfg.MaxK, k+5) }
	for _, sc := range "abcde" {
		rng := rand.New(rand.NewPCG(cfg.Seed, uint64(sc)))
		for r := range cfg.Reps {
			x, d, k := synth.Scenario(byte(sc), rng)
			w := (&Workload{Name: fmt.Sprintf("scenario-%c", sc), Kind: "scenario", K: k, D: d, X: x}).finish(seedOf(uint64(sc), uint64(r)))
			c := gridCase{name: fmt.Sprintf("scenario-%c#%d", sc, r+1), family: "scenario", k: k, maxK: maxK(k), seeds: []uint64{uint64(r + 1)}, w: w}
			if r == 0 {
				c.seeds, c.stable = seeds(cfg.Seeds), true
			}
			cs = append(cs, c)
		}
	}
	for _, name := range cfg.SeedSets {
		w, err := loadRef(name, cfg.DataDirs)
		if err != nil {
			return nil, err
		}
		cs = append(cs, gridCase{name: name, family: "reference", k: w.K, maxK: maxK(w.K), seeds: seeds(cfg.Seeds), stable: true, w: w})
	}
	for _, name := range cfg.Refs {
		w, err := loadRef(name, cfg.DataDirs)
		if err != nil {
			return nil, err
		}
		cs = append(cs, gridCase{name: name, family: "reference", k: w.K, maxK: maxK(w.K), seeds: []uint64{1}, w: w})
	}
	if cfg.Mixtures {
		// Two realizations of every design (MixReps), so that no weight rests on one draw.
		i := 0
		for _, k := range []int{3, 6} {
			for _, d := range []int{2, 10} {
				for _, sep := range []float64{4, 7} {
					for _, el := range []float64{1, 2, 4} {
						i++
						for r := range cfg.MixReps {
							o := synth.MixtureOptions{Rows: cfg.Rows, Dims: d, K: k, Separation: sep, Elongation: el, Seed: seedOf(7+10*uint64(r), uint64(i))}
							cs = append(cs, mixtureCase(fmt.Sprintf("mix k=%d d=%d sep=%g elong=%g #%d", k, d, sep, el, r+1), o, "", maxK(k)))
						}
					}
				}
			}
		}
		// Many clusters (issue 12: weak many-cluster structure lost in stage 1), 300 rows each.
		for _, k := range []int{10, 16} {
			for _, d := range []int{10, 32} {
				for _, sep := range []float64{4, 6} {
					i++
					for r := range cfg.MixReps {
						o := synth.MixtureOptions{Rows: max(cfg.Rows, 300*k), Dims: d, K: k, Separation: sep, Elongation: 1, Seed: seedOf(7+10*uint64(r), uint64(i))}
						cs = append(cs, mixtureCase(fmt.Sprintf("mix k=%d d=%d sep=%g #%d", k, d, sep, r+1), o, "", maxK(k)))
					}
				}
			}
		}
		extra := []struct {
			name string
			o    synth.MixtureOptions
			tail string
		}{
			{"mix k=4 d=5 unequal sizes", synth.MixtureOptions{Dims: 5, K: 4, Separation: 7, Elongation: 1, Shares: []float64{0.6, 0.25, 0.1, 0.05}}, ""},
			{"mix k=5 d=3 unequal spreads", synth.MixtureOptions{Dims: 3, K: 5, Separation: 8, Elongation: 1, ScaleSpread: 0.5}, ""},
			{"mix k=4 d=5 2% far outliers", synth.MixtureOptions{Dims: 5, K: 4, Separation: 7, Elongation: 1}, "outliers"},
			{"mix k=4 d=4 heavy tails", synth.MixtureOptions{Dims: 4, K: 4, Separation: 8, Elongation: 1}, "t"},
			{"mix k=3 d=4 log-normal", synth.MixtureOptions{Dims: 4, K: 3, Separation: 6, Elongation: 1}, "exp"},
		}
		for j, e := range extra {
			for r := range cfg.MixReps {
				o := e.o
				o.Rows, o.Seed = cfg.Rows, seedOf(8+10*uint64(r), uint64(j))
				cs = append(cs, mixtureCase(fmt.Sprintf("%s #%d", e.name, r+1), o, e.tail, maxK(o.K)))
			}
		}
	}
	if cfg.Shapes {
		for _, sh := range []struct {
			shape string
			d     int
		}{{"correlated", 5}, {"lognormal", 5}, {"student-t", 5}, {"uniform", 3}, {"elongated", 2}} {
			for r := range 2 {
				x, err := synth.OneCluster(sh.shape, cfg.Rows, sh.d, rand.New(rand.NewPCG(cfg.Seed, uint64(r+10*sh.d))))
				if err != nil {
					return nil, err
				}
				name := fmt.Sprintf("one %s d=%d #%d", sh.shape, sh.d, r+1)
				w := (&Workload{Name: name, Kind: "one-cluster", K: 1, D: sh.d, X: x}).finish(uint64(r))
				cs = append(cs, gridCase{name: name, family: "one-cluster", k: 1, maxK: cfg.MaxK, seeds: []uint64{1}, w: w})
			}
		}
	}
	return cs, nil
}

// mixtureCase is the grid case of a generated mixture, reshaped by tails.
func mixtureCase(name string, o synth.MixtureOptions, tail string, maxK int) gridCase {
	x, _ := synth.Mixture(o)
	tails(x, o.Dims, tail, rand.New(rand.NewPCG(o.Seed, 3)))
	w := (&Workload{Name: name, Kind: "mixture", K: o.K, D: o.Dims, X: x}).finish(o.Seed)
	return gridCase{name: name, family: "mixture", k: o.K, maxK: maxK, seeds: []uint64{1}, w: w}
}

// tails reshapes a mixture in place: "outliers" replaces 2% of rows by points uniform in a box
// three times the data's range; "t" multiplies each row's offset from the data mean by a
// 1/sqrt(chi2_3/3) factor (Student-t-like heavy tails around the centre); "exp" exponentiates
// every value after scaling it to unit spread (log-normal, right-skewed clusters).
func tails(x []float64, d int, kind string, rng *rand.Rand) {
	n := len(x) / d
	lo, hi := make([]float64, d), make([]float64, d)
	for j := range d {
		lo[j], hi[j] = math.Inf(1), math.Inf(-1)
		for i := range n {
			lo[j], hi[j] = min(lo[j], x[i*d+j]), max(hi[j], x[i*d+j])
		}
	}
	switch kind {
	case "outliers":
		for i := range n {
			if rng.Float64() < 0.02 {
				for j := range d {
					r := hi[j] - lo[j]
					x[i*d+j] = lo[j] - r + 3*r*rng.Float64()
				}
			}
		}
	case "t":
		// Heavy tails per cluster are approximated around the nearest row's own value: each row is
		// pushed away from its cluster by a random factor; clusters stay centred.
		for i := range n {
			c := 0.0
			for range 3 {
				g := rng.NormFloat64()
				c += g * g
			}
			f := 1/math.Sqrt(c/3) - 1
			for j := range d {
				x[i*d+j] += f * rng.NormFloat64()
			}
		}
	case "exp":
		for j := range d {
			r := hi[j] - lo[j]
			for i := range n {
				x[i*d+j] = math.Exp(2 * (x[i*d+j] - lo[j]) / r)
			}
		}
	}
}

// RunGrid runs every case and seed of cfg and returns the runs in a fixed order.
func RunGrid(ctx context.Context, cfg GridConfig, log io.Writer) ([]GridRun, error) {
	cs, err := gridCases(cfg)
	if err != nil {
		return nil, err
	}
	type job struct {
		c    *gridCase
		seed uint64
	}
	var jobs []job
	for i := range cs {
		for _, s := range cs[i].seeds {
			jobs = append(jobs, job{&cs[i], s})
		}
	}
	runs := make([]GridRun, len(jobs))
	errs := make([]error, len(jobs))
	err = parallel(ctx, len(jobs), cfg.Workers, func(i int) {
		j := jobs[i]
		t0 := time.Now()
		s, err := summaryOf(j.c.w, sketchSpec{Coreset: cfg.Coreset, Sample: 4096, MinK: 1, MaxK: j.c.maxK, Seed: j.seed, Scale: cfg.Scale})
		if err != nil {
			errs[i] = err
			return
		}
		o := criteria.DefaultOptions()
		o.MaxK, o.Seed, o.Workers = j.c.maxK, j.seed, 1
		r, err := criteria.Evaluate(ctx, s, o)
		if err != nil {
			errs[i] = fmt.Errorf("%s seed %d: %w", j.c.name, j.seed, err)
			return
		}
		run := GridRun{Case: j.c.name, Family: j.c.family, Stable: j.c.stable, K: j.c.k, MaxK: j.c.maxK, Seed: j.seed,
			Modes: r.Modes, Seconds: time.Since(t0).Seconds(), Rows: s.N, Points: s.Coreset.Len(), Dims: s.D, PerK: r.PerK}
		run.setVotes(r.Votes)
		runs[i] = run
		if log != nil {
			fmt.Fprintf(log, "grid: %s seed %d: verdict %d (true %d), %.1fs\n", j.c.name, j.seed, r.Verdict.K, j.c.k, run.Seconds)
		}
	})
	if err != nil {
		return nil, err
	}
	for _, e := range errs {
		if e != nil {
			return nil, e
		}
	}
	return runs, nil
}

// SaveGrid writes the runs as a JSON array, one run per line.
func SaveGrid(path string, runs []GridRun) error {
	var b []byte
	b = append(b, "[\n"...)
	for i, r := range runs {
		line, err := json.Marshal(r)
		if err != nil {
			return err
		}
		b = append(b, line...)
		if i < len(runs)-1 {
			b = append(b, ',')
		}
		b = append(b, '\n')
	}
	b = append(b, "]\n"...)
	return os.WriteFile(path, b, 0o644)
}

// LoadGrid reads runs written by SaveGrid and votes them again with the current rules (Revote).
func LoadGrid(path string) ([]GridRun, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var runs []GridRun
	if err := json.Unmarshal(b, &runs); err != nil {
		return nil, fmt.Errorf("bench: %s: %w", path, err)
	}
	for i := range runs {
		runs[i].Revote()
	}
	return runs, nil
}
