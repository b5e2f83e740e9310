package bench

import (
	"fmt"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/criteria"
	"github.com/kgauge/kgauge/internal/kmeans"
	"github.com/kgauge/kgauge/sketch"
)

// Probe and unit sizes of the in-memory sketch path; they are the root package's defaults
// (kgauge.DefaultProbeRows, its k-means++ cap of 8192 probe rows, and 65,536-row row groups).
const (
	probeRows     = kgauge.DefaultProbeRows
	probeInitRows = 8192
	unitRows      = 65536
)

// sketchSpec is what a sketch keeps.
type sketchSpec struct {
	Coreset, Sample int
	MinK, MaxK      int
	Seed            uint64
	Scale           kgauge.Scale // kgauge's default when empty
}

// exactScale is the scaling of the accuracy report's sketches: z-scores, as its exact side takes
// every row (Workload.Z), so that the two differ by the sketch alone.
const exactScale = kgauge.ZScore

// summaryOf returns kgauge.Summarize's summary of w's sketch (sketchOf), scaled as spec.Scale says.
func summaryOf(w *Workload, spec sketchSpec) (criteria.Summary, error) {
	sk, err := sketchOf(w, spec)
	if err != nil {
		return criteria.Summary{}, err
	}
	scale := spec.Scale
	if scale == "" {
		scale = kgauge.DefaultOptions().Scale
	}
	s, _ := kgauge.Summarize(sk, scale)
	return s, nil
}

// sketchOf feeds the raw rows of w to a sketch the way kgauge's pass does (a probe of random rows
// fixes the weighting scale and the mini-batch starting centres, then every row once, in units).
func sketchOf(w *Workload, spec sketchSpec) (*sketch.Sketch, error) {
	d, n := w.D, w.N
	rng := rand.New(rand.NewPCG(spec.Seed, 0x70726f6265))
	pn := min(n, probeRows)
	rows := make([]float64, 0, pn*d)
	for _, i := range rng.Perm(n)[:pn] {
		rows = append(rows, w.X[i*d:(i+1)*d]...)
	}
	p := sketch.Probe{Center: make([]float64, d), Scale: make([]float64, d), Init: map[int][]float64{}, Rows: int64(pn)}
	col := make([]float64, pn)
	for j := range d {
		for i := range pn {
			col[i] = rows[i*d+j]
		}
		p.Center[j], p.Scale[j] = stat.PopMeanStdDev(col, nil)
		if !(p.Scale[j] > 0) {
			p.Scale[j] = 1
		}
	}
	for i := range pn {
		for j := range d {
			z := (rows[i*d+j] - p.Center[j]) / p.Scale[j]
			rows[i*d+j] = z
			p.MeanSq += z * z
		}
	}
	p.MeanSq /= float64(pn)
	init := kmeans.Data{X: rows[:min(pn, probeInitRows)*d], D: d}
	for k := spec.MinK; k <= spec.MaxK; k++ {
		p.Init[k] = kmeans.PlusPlus(init, k, rand.New(rand.NewPCG(spec.Seed, uint64(k))), nil)
	}
	cols := make([]string, d)
	for j := range cols {
		cols[j] = fmt.Sprintf("c%02d", j)
	}
	cfg := sketch.Config{Columns: cols, MinK: spec.MinK, MaxK: spec.MaxK, CoresetSize: spec.Coreset,
		SampleSize: spec.Sample, ExpectedRows: int64(n), Seed: spec.Seed}
	sk, err := sketch.New(cfg, p)
	if err != nil {
		return nil, err
	}
	for u, off := 0, 0; off < n; u, off = u+1, off+unitRows {
		sk.BeginUnit(u)
		sk.Add(w.X[off*d : min(n, off+unitRows)*d])
	}
	return sk, nil
}

// uniformData returns the summary's uniform sample with every point weighted N/m, so that sums
// over it estimate sums over all rows.
func uniformData(s criteria.Summary) kmeans.Data {
	m := s.Sample.Len()
	w := make([]float64, m)
	for i := range w {
		w[i] = s.N / float64(m)
	}
	return kmeans.Data{X: s.Sample.X, W: w, D: s.D}
}
