package bench

import (
	"context"
	"fmt"
	"io"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
	"github.com/kgauge/kgauge/sketch"
)

// VerdictRow is one cell of the verdict table: kgauge's verdict from a sketch with a coreset of M
// points (default sample size and criteria options) against the verdict of criteria.Evaluate on
// criteria.ExactSummary of all rows.
type VerdictRow struct {
	Workload     string
	N, D, K      int
	ExactVerdict int
	M            int
	Runs         int
	Differs      float64 // share of runs whose verdict differs from ExactVerdict
	IsK          float64 // share of runs whose verdict is the true K
	Votes        []int   // the verdict of each run
}

// runVerdict compares the verdict from sketches of each coreset size with the exact-data verdict.
func runVerdict(ctx context.Context, cfg AccuracyConfig, res *Accuracy, log io.Writer) error {
	ws, skipped, err := workloads(cfg, cfg.VerdictWorkload, cfg.VerdictRows, false, cfg.Seed+3)
	if err != nil {
		return err
	}
	res.noteSkipped(skipped)
	opt := criteria.DefaultOptions()
	for wi, w := range ws {
		var sizes []int
		for _, m := range cfg.VerdictSizes {
			if m < w.N && m >= 2*opt.MaxK {
				sizes = append(sizes, m)
			}
		}
		if len(sizes) == 0 {
			continue
		}
		res.noteWorkload("verdict", w)
		eo := opt
		eo.Workers = cfg.Workers
		exact, err := criteria.Evaluate(ctx, criteria.ExactSummary(kmeans.Data{X: w.Z, D: w.D}), eo)
		if err != nil {
			return fmt.Errorf("%s: exact: %w", w.Name, err)
		}
		fmt.Fprintf(log, "bench: verdict %s n=%d: exact verdict %d (true %d)\n", w.Name, w.N, exact.Verdict.K, w.K)
		type cell struct{ m, rep int }
		var cells []cell
		for _, m := range sizes {
			for r := range cfg.VerdictRepeats {
				cells = append(cells, cell{m, r})
			}
		}
		got := make([]int, len(cells))
		errs := make([]error, len(cells))
		err = parallel(ctx, len(cells), cfg.Workers, func(i int) {
			c := cells[i]
			seed := seedOf(30, uint64(wi), uint64(c.m), uint64(c.rep))
			s, err := summaryOf(w, sketchSpec{Coreset: c.m, Sample: sketch.DefaultSampleSize, MinK: opt.MinK,
				MaxK: opt.MaxK, Seed: seed, Scale: exactScale})
			if err != nil {
				errs[i] = err
				return
			}
			o := opt
			o.Workers, o.Seed = 1, seed
			r, err := criteria.Evaluate(ctx, s, o)
			if err != nil {
				errs[i] = err
				return
			}
			got[i] = r.Verdict.K
		})
		if err != nil {
			return err
		}
		for _, e := range errs {
			if e != nil {
				return fmt.Errorf("%s: %w", w.Name, e)
			}
		}
		for _, m := range sizes {
			row := VerdictRow{Workload: w.Name, N: w.N, D: w.D, K: w.K, ExactVerdict: exact.Verdict.K, M: m}
			differs, isK := 0, 0
			for i, c := range cells {
				if c.m != m {
					continue
				}
				row.Votes = append(row.Votes, got[i])
				if got[i] != exact.Verdict.K {
					differs++
				}
				if got[i] == w.K {
					isK++
				}
			}
			row.Runs = len(row.Votes)
			row.Differs = float64(differs) / float64(row.Runs)
			row.IsK = float64(isK) / float64(row.Runs)
			res.Verdict = append(res.Verdict, row)
		}
	}
	return nil
}
