package bench

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat"

	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/internal/refsets"
)

// Workload is an in-memory data set with a known number of clusters.
type Workload struct {
	Name   string
	Kind   string // "demo", "mixture" or "reference"
	Source string // how it was made, or the file it was read from
	K, D   int
	N      int
	X      []float64 // raw rows, row-major, in a seeded random order
	Z      []float64 // the same rows z-scored with the exact column means and standard deviations
}

// WorkloadInfo describes a workload in the report.
type WorkloadInfo struct {
	Experiment         string
	Name, Kind, Source string
	K, D, Rows         int
}

// Info returns the workload's description.
func (w *Workload) Info() WorkloadInfo {
	return WorkloadInfo{Name: w.Name, Kind: w.Kind, Source: w.Source, K: w.K, D: w.D, Rows: w.N}
}

// syntheticNames are the generated workloads, in report order.
var syntheticNames = []string{"demo-loads", "balanced-2d", "balanced-8d", "balanced-16d", "balanced-64d",
	"unbalanced-8d", "elongated-8d", "mixed-scales-16d"}

// refSet is a published point set and its published k.
type refSet struct {
	name, file string
	k          int
}

// referenceSets are the published sets with their published k (see testdata/refsets/README.md and
// shared/data/README.md for provenance: Fränti & Sieranoja 2018 for S, A, DIM and Unbalance;
// Ruspini 1970 for Ruspini).
var referenceSets = []refSet{
	{"S1", "s1.txt", 15}, {"S2", "s2.txt", 15}, {"A1", "a1.txt", 20}, {"DIM032", "dim032.txt", 16},
	{"Unbalance", "unbalance.txt", 8}, {"Ruspini", "ruspini.csv", 4},
}

// mixtureOptions returns the generator settings of a mixture workload.
func mixtureOptions(name string, n int, seed uint64) (synth.MixtureOptions, bool) {
	o := synth.MixtureOptions{Rows: n, Separation: 6, Elongation: 1, Seed: seed}
	switch name {
	case "balanced-2d":
		o.Dims, o.K = 2, 5
	case "balanced-8d":
		o.Dims, o.K = 8, 8
	case "balanced-16d":
		o.Dims, o.K = 16, 10
	case "balanced-64d":
		o.Dims, o.K = 64, 10
	case "unbalanced-8d":
		o.Dims, o.K = 8, 8
		o.Shares = []float64{0.33, 0.33, 0.33, 0.002, 0.002, 0.002, 0.002, 0.002}
	case "elongated-8d":
		o.Dims, o.K, o.Separation, o.Elongation = 8, 6, 8, 3
	case "mixed-scales-16d":
		o.Dims, o.K, o.ScaleSpread = 16, 8, 2
	default:
		return o, false
	}
	return o, true
}

// distantFactor moves the small clusters of "unbalanced-8d" this many times farther from the
// centre of the mixture, so that missing one costs much more than its share of rows.
const distantFactor = 4

// synthetic generates a named workload with n rows (before dropping rows with nulls).
func synthetic(name string, n int, seed uint64) (*Workload, error) {
	if name == "demo-loads" {
		o := synth.DefaultLoadOptions()
		o.Rows, o.Partitions, o.Seed = n, 1, seed
		x, _ := synth.Loads(o, 0)
		w := &Workload{Name: name, Kind: "demo", K: o.Archetypes, D: synth.Hours,
			Source: fmt.Sprintf("synth.Loads: %d archetypes, default shares, noise %g, %g of rows with an outage (dropped), seed %d",
				o.Archetypes, o.Noise, o.NullShare, seed)}
		w.X = dropNaNRows(x, w.D)
		return w.finish(seed), nil
	}
	o, ok := mixtureOptions(name, n, seed)
	if !ok {
		return nil, fmt.Errorf("bench: unknown workload %q", name)
	}
	x, labels := synth.Mixture(o)
	src := fmt.Sprintf("synth.Mixture: k=%d, %d dims, separation %g sd", o.K, o.Dims, o.Separation)
	switch {
	case o.Shares != nil:
		c, err := synth.MixtureCentres(o)
		if err != nil {
			return nil, err
		}
		for i, l := range labels {
			if o.Shares[l] >= 0.01 {
				continue
			}
			for j := range o.Dims {
				x[i*o.Dims+j] += (distantFactor - 1) * c[l*o.Dims+j]
			}
		}
		src += fmt.Sprintf(", three clusters of 33%% and five of 0.2%% moved %d× farther out", distantFactor)
	case o.Elongation > 1:
		src += fmt.Sprintf(", elongation %g", o.Elongation)
	case o.ScaleSpread > 0:
		src += fmt.Sprintf(", column scales 10^U(-%g,%g)", o.ScaleSpread, o.ScaleSpread)
	default:
		src += ", balanced"
	}
	w := &Workload{Name: name, Kind: "mixture", K: o.K, D: o.Dims, X: x, Source: src + fmt.Sprintf(", seed %d", seed)}
	return w.finish(seed), nil
}

// dropNaNRows removes rows holding a NaN, as kgauge skips rows with nulls.
func dropNaNRows(x []float64, d int) []float64 {
	out := x[:0]
	for i := 0; i+d <= len(x); i += d {
		if !slices.ContainsFunc(x[i:i+d], math.IsNaN) {
			out = append(out, x[i:i+d]...)
		}
	}
	return out
}

// finish shuffles the rows (seeded) and computes N and Z.
func (w *Workload) finish(seed uint64) *Workload {
	d := w.D
	w.N = len(w.X) / d
	rng := rand.New(rand.NewPCG(seed, 0x73687566))
	perm := rng.Perm(w.N)
	x := make([]float64, len(w.X))
	for i, p := range perm {
		copy(x[i*d:(i+1)*d], w.X[p*d:(p+1)*d])
	}
	w.X = x
	w.Z = make([]float64, len(x))
	col := make([]float64, w.N)
	for j := range d {
		for i := range w.N {
			col[i] = x[i*d+j]
		}
		mean, sd := stat.PopMeanStdDev(col, nil)
		if !(sd > 0) {
			sd = 1
		}
		for i := range w.N {
			w.Z[i*d+j] = (x[i*d+j] - mean) / sd
		}
	}
	return w
}

// reference reads a published set from the first folder of dirs that holds it.
func reference(name string, dirs []string) (*Workload, error) {
	i := slices.IndexFunc(referenceSets, func(r refSet) bool {
		return r.name == name
	})
	if i < 0 {
		return nil, fmt.Errorf("bench: unknown reference set %q", name)
	}
	r := referenceSets[i]
	for _, dir := range dirs {
		path := filepath.Join(dir, r.file)
		if _, err := os.Stat(path); err != nil {
			continue
		}
		x, d, err := readPoints(path)
		if err != nil {
			return nil, err
		}
		w := &Workload{Name: r.name, Kind: "reference", K: r.k, D: d, X: x,
			Source: fmt.Sprintf("%s (published k = %d)", path, r.k)}
		return w.finish(seedOf(uint64(i))), nil
	}
	return nil, fmt.Errorf("bench: reference set %s (%s) not found in %s", r.name, r.file, strings.Join(dirs, ", "))
}

// readPoints reads a reference point set (internal/refsets).
func readPoints(path string) ([]float64, int, error) {
	x, d, err := refsets.Read(path)
	if err != nil {
		return nil, 0, fmt.Errorf("bench: %w", err)
	}
	return x, d, nil
}

// workloads returns the synthetic workloads named in names (all when names is nil) with n rows
// each and the reference sets found in dirs; missing reference sets are listed in skipped.
func workloads(cfg AccuracyConfig, names []string, n int, withRefs bool, seed uint64) (ws []*Workload, skipped []string, err error) {
	if names == nil {
		names = syntheticNames
	}
	for _, name := range names {
		if !cfg.wants(name) {
			continue
		}
		if slices.ContainsFunc(referenceSets, func(r refSet) bool {
			return r.name == name
		}) {
			w, err := reference(name, cfg.DataDirs)
			if err != nil {
				skipped = append(skipped, err.Error())
				continue
			}
			ws = append(ws, w)
			continue
		}
		w, err := synthetic(name, n, seed)
		if err != nil {
			return nil, nil, err
		}
		ws = append(ws, w)
	}
	if withRefs {
		for _, r := range referenceSets {
			if !cfg.wants(r.name) {
				continue
			}
			w, err := reference(r.name, cfg.DataDirs)
			if err != nil {
				skipped = append(skipped, err.Error())
				continue
			}
			ws = append(ws, w)
		}
	}
	return ws, skipped, nil
}

// wants reports whether the workload is in the Only list (or there is none).
func (c AccuracyConfig) wants(name string) bool {
	return len(c.Only) == 0 || slices.Contains(c.Only, name)
}
