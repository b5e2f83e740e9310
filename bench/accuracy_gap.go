package bench

import (
	"context"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"slices"

	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
)

// GapRow is one cell of the gap table: reference sets (and the data side) of Size points, B of
// them, against the large run.
type GapRow struct {
	Workload      string
	K             int
	Ref           string // "box" or "pca"
	Size, B       int
	Runs          int
	DiffAtK       Stat    // |Gap(K) − large-run Gap(K)| at the true K
	MaxDiff       Stat    // max over k of |Gap(k) − large-run Gap(k)|
	ChoiceDiffers float64 // share of runs whose chosen k differs from the large run's
	ChoiceIsK     float64 // share of runs choosing the true K
}

// GapLargeRow is the large run of one workload and reference.
type GapLargeRow struct {
	Workload     string
	K, KMax      int
	Ref          string
	Size, B      int
	GapAtK, SAtK float64
	Choice       int // 0 when the rule picks no k below KMax
}

// gapLloyd are the Lloyd settings of criteria.Evaluate's gap fits (relative tolerance 1e-5).
var gapLloyd = kmeans.LloydOptions{MaxIter: 100, Tol: 1e-5}

// gapCurves holds ln W_k (index k−1) of the data side and of each reference set.
type gapCurves struct {
	data     []float64
	box, pca [][]float64
}

// curves fits k = 1..kmax (restarts k-means++ starts each) on a data subsample of size points and
// on nrefs box and PCA-box reference sets of the same size.
func curves(ctx context.Context, z []float64, d, size, nrefs, kmax, restarts int, lo, hi, plo, phi []float64, seed uint64, workers int) (gapCurves, error) {
	n := len(z) / d
	size = min(size, n)
	rng := rand.New(rand.NewPCG(seed, 1))
	x := make([]float64, 0, size*d)
	for _, i := range rng.Perm(n)[:size] {
		x = append(x, z[i*d:(i+1)*d]...)
	}
	sets := []kmeans.Data{{X: x, D: d}}
	sets = append(sets, criteria.BoxReference(lo, hi, size, nrefs, rand.New(rand.NewPCG(seed, 2)))...)
	sets = append(sets, criteria.PCAReference(plo, phi, size, nrefs, rand.New(rand.NewPCG(seed, 3)))...)
	lw := make([][]float64, len(sets))
	err := parallel(ctx, len(sets), workers, func(i int) {
		r := rand.New(rand.NewPCG(seed, uint64(100+i)))
		lw[i] = make([]float64, kmax)
		for k := 1; k <= kmax; k++ {
			c := kmeans.Fit(sets[i], k, kmeans.FitOptions{Restarts: restarts, Lloyd: gapLloyd, Rand: r}).Cost
			lw[i][k-1] = math.Log(c)
		}
	})
	return gapCurves{data: lw[0], box: lw[1 : 1+nrefs], pca: lw[1+nrefs:]}, err
}

// gapOf returns Gap(k) and s_k from the first B reference curves (Tibshirani, Walther & Hastie
// 2001: divisor B in sd_k, s_k = sd_k sqrt(1 + 1/B)), and the k chosen by criteria.GapRule
// (0 if none).
func gapOf(data []float64, refs [][]float64, B int) (gap, s []float64, choice int) {
	kmax := len(data)
	gap, s = make([]float64, kmax), make([]float64, kmax)
	for k := range kmax {
		mean := 0.0
		for _, r := range refs[:B] {
			mean += r[k]
		}
		mean /= float64(B)
		v := 0.0
		for _, r := range refs[:B] {
			v += (r[k] - mean) * (r[k] - mean)
		}
		gap[k] = mean - data[k]
		s[k] = math.Sqrt(v/float64(B)) * math.Sqrt(1+1/float64(B))
	}
	return gap, s, criteria.GapRule(gap, s) + 1
}

// runGap compares the gap statistic at each reference size and B with a large run.
func runGap(ctx context.Context, cfg AccuracyConfig, res *Accuracy, log io.Writer) error {
	ws, skipped, err := workloads(cfg, cfg.GapWorkload, cfg.GapRows, false, cfg.Seed+2)
	if err != nil {
		return err
	}
	res.noteSkipped(skipped)
	nrefs := slices.Max(cfg.GapBs)
	for wi, w := range ws {
		res.noteWorkload("gap", w)
		d := w.D
		full := kmeans.Data{X: w.Z, D: d}
		ex := criteria.ExactSummary(full)
		_, plo, phi, err := criteria.PCABox(ex.Cov, ex.Mean, full)
		if err != nil {
			return fmt.Errorf("%s: %w", w.Name, err)
		}
		kmax := w.K + cfg.GapExtraK
		large, err := curves(ctx, w.Z, d, cfg.GapLarge, cfg.GapLargeB, kmax, cfg.GapLargeRestarts, ex.Min, ex.Max, plo, phi, seedOf(20, uint64(wi)), cfg.Workers)
		if err != nil {
			return err
		}
		refOf := func(c gapCurves, ref string) [][]float64 {
			if ref == "box" {
				return c.box
			}
			return c.pca
		}
		type lr struct {
			gap    []float64
			choice int
		}
		largeOf := map[string]lr{}
		for _, ref := range []string{"box", "pca"} {
			g, s, ch := gapOf(large.data, refOf(large, ref), cfg.GapLargeB)
			largeOf[ref] = lr{g, ch}
			res.GapLarge = append(res.GapLarge, GapLargeRow{Workload: w.Name, K: w.K, KMax: kmax, Ref: ref,
				Size: min(cfg.GapLarge, w.N), B: cfg.GapLargeB, GapAtK: g[w.K-1], SAtK: s[w.K-1], Choice: ch})
			fmt.Fprintf(log, "bench: gap %s %s large run: Gap(K)=%.4f s=%.4f choice %d\n", w.Name, ref, g[w.K-1], s[w.K-1], ch)
		}
		type acc struct {
			atK, maxD    []float64
			differs, isK int
		}
		cells := map[[3]int]*acc{} // (ref, size, B)
		for r := range cfg.GapRepeats {
			for _, size := range cfg.GapSizes {
				c, err := curves(ctx, w.Z, d, size, nrefs, kmax, criteria.DefaultOptions().GapRestarts, ex.Min, ex.Max, plo, phi,
					seedOf(21, uint64(wi), uint64(size), uint64(r)), cfg.Workers)
				if err != nil {
					return err
				}
				for ri, ref := range []string{"box", "pca"} {
					L := largeOf[ref]
					for _, B := range cfg.GapBs {
						g, _, ch := gapOf(c.data, refOf(c, ref), B)
						key := [3]int{ri, size, B}
						a := cells[key]
						if a == nil {
							a = &acc{}
							cells[key] = a
						}
						md := 0.0
						for k := range g {
							md = math.Max(md, math.Abs(g[k]-L.gap[k]))
						}
						a.atK = append(a.atK, math.Abs(g[w.K-1]-L.gap[w.K-1]))
						a.maxD = append(a.maxD, md)
						if ch != L.choice {
							a.differs++
						}
						if ch == w.K {
							a.isK++
						}
					}
				}
			}
		}
		for ri, ref := range []string{"box", "pca"} {
			for _, size := range cfg.GapSizes {
				for _, B := range cfg.GapBs {
					a := cells[[3]int{ri, size, B}]
					runs := len(a.atK)
					res.Gap = append(res.Gap, GapRow{Workload: w.Name, K: w.K, Ref: ref, Size: size, B: B, Runs: runs,
						DiffAtK: statOf(a.atK), MaxDiff: statOf(a.maxD),
						ChoiceDiffers: float64(a.differs) / float64(runs), ChoiceIsK: float64(a.isK) / float64(runs)})
				}
			}
		}
	}
	return nil
}
