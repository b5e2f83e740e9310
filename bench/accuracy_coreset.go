package bench

import (
	"context"
	"fmt"
	"io"
	"math"
	"math/rand/v2"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

// CoreRow is one cell of the coreset table: a summary of m points (the coreset, or the uniform
// sample beside it) against all rows, at the workload's true k.
type CoreRow struct {
	Workload  string
	N, D, K   int
	Summary   string // "coreset" or "uniform"
	M         int
	Runs      int
	WCSS      Stat // |WCSS on the summary − WCSS on all rows| / WCSS on all rows, same centres
	BICKMeans Stat // the same for criteria.BICKMeans
	BICGMM    Stat // the same for the diagonal-GMM BIC (criteria.GMMFit on the summary)
	Excess    Stat // full-data cost of summary-fitted centres / of all-row-fitted centres − 1 (signed)
}

// coreMeasure is one run's numbers for one summary.
type coreMeasure struct{ wcss, bicKM, bicGMM, excess float64 }

// measureSummary fits k-means on the weighted summary p (weights scaled by scale to N rows) and
// compares its estimates with all rows.
func measureSummary(p, full kmeans.Data, k, restarts int, scale, bestCost float64, rng *rand.Rand) coreMeasure {
	fit := kmeans.Fit(p, k, kmeans.FitOptions{Restarts: restarts, Rand: rng})
	d := full.D
	labels := make([]int32, full.Len())
	kmeans.Assign(full.X, d, fit.Centres, labels, nil)
	sizes := make([]float64, k)
	for _, l := range labels {
		sizes[l]++
	}
	fullCost := kmeans.Cost(full, fit.Centres)
	rel := func(est, exact float64) float64 { return math.Abs(est-exact) / math.Abs(exact) }
	var m coreMeasure
	m.wcss = rel(fit.Cost*scale, fullCost)
	m.excess = fullCost/bestCost - 1
	est := make([]float64, k)
	for j, z := range fit.Sizes {
		est[j] = z * scale
	}
	m.bicKM = rel(criteria.BICKMeans(est, fit.Cost*scale, d), criteria.BICKMeans(sizes, fullCost, d))
	// The variance floor of Evaluate: 1e-6 times the mean per-dimension variance, 1 after z-scoring.
	g, ll, _ := criteria.GMMFit(p, fit, criteria.GMMOptions{Reg: 1e-6})
	par := criteria.GMMParams(k, d)
	n := float64(full.Len())
	m.bicGMM = rel(criteria.BIC(ll*scale, par, n), criteria.BIC(g.LogLik(full, nil), par, n))
	return m
}

// runCoreset measures the coreset and the uniform sample of each size against all rows.
func runCoreset(ctx context.Context, cfg AccuracyConfig, res *Accuracy, log io.Writer) error {
	ws, skipped, err := workloads(cfg, nil, cfg.CoreRows, true, cfg.Seed+1)
	if err != nil {
		return err
	}
	res.noteSkipped(skipped)
	for wi, w := range ws {
		if err := ctx.Err(); err != nil {
			return err
		}
		var sizes []int
		for _, m := range cfg.CoreSizes {
			if m < w.N && m >= 2*w.K {
				sizes = append(sizes, m)
			}
		}
		if len(sizes) == 0 {
			continue
		}
		res.noteWorkload("coreset", w)
		full := kmeans.Data{X: w.Z, D: w.D}
		best := kmeans.Fit(full, w.K, kmeans.FitOptions{Restarts: cfg.Restarts,
			Rand: rand.New(rand.NewPCG(seedOf(10, uint64(wi)), uint64(w.N)))})
		fmt.Fprintf(log, "bench: coreset %s n=%d: all-row cost %.6g\n", w.Name, w.N, best.Cost)
		type cell struct{ m, rep int }
		var cells []cell
		for _, m := range sizes {
			for r := range cfg.CoreRepeats {
				cells = append(cells, cell{m, r})
			}
		}
		out := make([][2]coreMeasure, len(cells))
		errs := make([]error, len(cells))
		err := parallel(ctx, len(cells), cfg.Workers, func(i int) {
			c := cells[i]
			s, err := summaryOf(w, sketchSpec{Coreset: c.m, Sample: c.m, MinK: w.K, MaxK: w.K,
				Seed: seedOf(11, uint64(wi), uint64(c.m), uint64(c.rep)), Scale: exactScale})
			if err != nil {
				errs[i] = err
				return
			}
			seed := seedOf(12, uint64(wi), uint64(c.m), uint64(c.rep))
			out[i][0] = measureSummary(s.Coreset, full, w.K, cfg.Restarts, s.N/s.Coreset.TotalWeight(), best.Cost,
				rand.New(rand.NewPCG(seed, 1)))
			out[i][1] = measureSummary(uniformData(s), full, w.K, cfg.Restarts, 1, best.Cost,
				rand.New(rand.NewPCG(seed, 1)))
		})
		if err != nil {
			return err
		}
		for _, e := range errs {
			if e != nil {
				return e
			}
		}
		for _, m := range sizes {
			for si, name := range []string{"coreset", "uniform"} {
				var wc, bk, bg, ex []float64
				for i, c := range cells {
					if c.m != m {
						continue
					}
					o := out[i][si]
					wc, bk, bg, ex = append(wc, o.wcss), append(bk, o.bicKM), append(bg, o.bicGMM), append(ex, o.excess)
				}
				res.Coreset = append(res.Coreset, CoreRow{Workload: w.Name, N: w.N, D: w.D, K: w.K, Summary: name,
					M: m, Runs: len(wc), WCSS: statOf(wc), BICKMeans: statOf(bk), BICGMM: statOf(bg), Excess: statOf(ex)})
			}
		}
	}
	return nil
}
