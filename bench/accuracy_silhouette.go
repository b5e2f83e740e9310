package bench

import (
	"context"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"sync"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

// SilRow is one cell of the silhouette table: the error of the anchor estimate at m anchors.
type SilRow struct {
	Workload string
	N, D, K  int
	Series   string // "all rows" (anchors measured against every row) or "coreset m=..." (kgauge's path)
	M        int    // anchors
	Runs     int
	Exact    float64 // exact mean silhouette of all rows for the labels
	AbsErr   Stat    // |estimate − exact|
	Coverage float64 // share of runs whose 95% interval holds the exact value
	MeanSE   float64 // mean reported standard error
}

// exactSilhouette returns the mean silhouette of the unweighted points z (row-major, d columns)
// for labels in 0..k-1, computed over all n² pairs on workers goroutines (Rousseeuw 1987, with his
// convention s(i) = 0 for a point alone in its cluster). It is an implementation independent of
// criteria.SilhouetteExact, which the tests compare it with; this one is parallel.
func exactSilhouette(z []float64, d int, labels []int32, k, workers int) float64 {
	n := len(z) / d
	size := make([]float64, k)
	for _, l := range labels {
		size[l]++
	}
	si := make([]float64, n) // per point, summed in order below so the mean does not depend on workers
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			sum := make([]float64, k)
			for i := w; i < n; i += workers {
				clear(sum)
				xi := z[i*d : (i+1)*d]
				for j := range n {
					sum[labels[j]] += math.Sqrt(kmeans.Dist2(xi, z[j*d:(j+1)*d]))
				}
				own := labels[i]
				if size[own] < 2 {
					continue // s = 0
				}
				a := sum[own] / (size[own] - 1)
				b := math.Inf(1)
				for c := range k {
					if int32(c) != own && size[c] > 0 {
						b = math.Min(b, sum[c]/size[c])
					}
				}
				if m := math.Max(a, b); m > 0 {
					si[i] = (b - a) / m
				}
			}
		}()
	}
	wg.Wait()
	t := 0.0
	for _, v := range si {
		t += v
	}
	return t / float64(n)
}

// runSilhouette measures the anchor estimate against the exact silhouette.
func runSilhouette(ctx context.Context, cfg AccuracyConfig, res *Accuracy, log io.Writer) error {
	ws, skipped, err := workloads(cfg, nil, cfg.SilRows, true, cfg.Seed)
	if err != nil {
		return err
	}
	res.noteSkipped(skipped)
	if cfg.SilBigRows > 0 && cfg.wants("balanced-16d") {
		big, err := synthetic("balanced-16d", cfg.SilBigRows, cfg.Seed)
		if err != nil {
			return err
		}
		ws = append(ws, big)
	}
	for wi, w := range ws {
		if err := ctx.Err(); err != nil {
			return err
		}
		res.noteWorkload("silhouette", w)
		full := kmeans.Data{X: w.Z, D: w.D}
		fit := kmeans.Fit(full, w.K, kmeans.FitOptions{Restarts: cfg.Restarts,
			Rand: rand.New(rand.NewPCG(seedOf(1, uint64(wi)), uint64(w.N)))})
		exact := exactSilhouette(w.Z, w.D, fit.Labels, w.K, cfg.Workers)
		fmt.Fprintf(log, "bench: silhouette %s n=%d: exact %.4f\n", w.Name, w.N, exact)

		type cell struct {
			series string
			m, rep int
			core   kmeans.Data
			labels []int32
		}
		var cells []cell
		for _, m := range cfg.SilAnchors {
			if m >= w.N {
				continue
			}
			reps := cfg.SilRepeats
			if w.N == cfg.SilBigRows && cfg.SilBigReps > 0 {
				reps = cfg.SilBigReps
			}
			for r := range reps {
				cells = append(cells, cell{"all rows", m, r, full, fit.Labels})
			}
		}
		if cfg.SilCoreset < w.N {
			series := fmt.Sprintf("coreset m=%d", cfg.SilCoreset)
			for r := range cfg.SilCoreReps {
				s, err := summaryOf(w, sketchSpec{Coreset: cfg.SilCoreset, Sample: 2, MinK: w.K, MaxK: w.K,
					Seed: seedOf(2, uint64(wi), uint64(r)), Scale: exactScale})
				if err != nil {
					return err
				}
				labels := make([]int32, s.Coreset.Len())
				kmeans.Assign(s.Coreset.X, w.D, fit.Centres, labels, nil)
				for _, m := range cfg.SilAnchors {
					cells = append(cells, cell{series, m, r, s.Coreset, labels})
				}
			}
		}
		est := make([]criteria.SilhouetteEstimate, len(cells))
		err := parallel(ctx, len(cells), cfg.Workers, func(i int) {
			c := cells[i]
			rng := rand.New(rand.NewPCG(seedOf(3, uint64(wi), uint64(c.m)), uint64(c.rep)))
			est[i] = criteria.SilhouetteAnchors(c.core, c.labels, w.K, c.m, rng)
		})
		if err != nil {
			return err
		}
		// Aggregate per (series, m) in the order cells were made.
		type key struct {
			series string
			m      int
		}
		var order []key
		errs := map[key][]float64{}
		cover := map[key]int{}
		se := map[key]float64{}
		for i, c := range cells {
			kk := key{c.series, c.m}
			if _, ok := errs[kk]; !ok {
				order = append(order, kk)
			}
			e := est[i]
			errs[kk] = append(errs[kk], math.Abs(e.Mean-exact))
			if e.Lo-1e-12 <= exact && exact <= e.Hi+1e-12 {
				cover[kk]++
			}
			se[kk] += e.SE
		}
		for _, kk := range order {
			runs := len(errs[kk])
			res.Silhouette = append(res.Silhouette, SilRow{Workload: w.Name, N: w.N, D: w.D, K: w.K,
				Series: kk.series, M: kk.m, Runs: runs, Exact: exact, AbsErr: statOf(errs[kk]),
				Coverage: float64(cover[kk]) / float64(runs), MeanSE: se[kk] / float64(runs)})
		}
	}
	return nil
}
