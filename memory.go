package kgauge

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/kgauge/kgauge/cost"
	"github.com/kgauge/kgauge/stream"
)

// ErrMemoryLimit is returned when Options.Memory cannot hold even the smallest sizes.
var ErrMemoryLimit = errors.New("kgauge: memory limit")

// PeakMemory is the predicted peak memory of Estimate with o on the opened dataset ds: the one
// memory model (cost.PredictMemory) that plan prints and --memory is checked against.
func PeakMemory(ds *stream.Dataset, o Options) int64 {
	return cost.PredictMemory(WorkloadOf(ds, o), cost.Default()).Peak
}

// fitMemory shrinks the sizes that cost memory until the predicted peak (PeakMemory) fits o.Memory,
// in this order: read batch, probe, uniform sample, coreset, workers. It fails, naming the figure
// needed, when even the smallest sizes do not fit. It runs after the footers are read and before
// any row is, in estimate, plan and Beam's planning step alike.
func (o Options) fitMemory(ds *stream.Dataset) (Options, error) {
	if o.Memory <= 0 {
		return o, nil
	}
	o = o.withDefaults()
	minCoreset := max(1000, 2*o.Criteria.MaxK)
	for PeakMemory(ds, o) > o.Memory {
		switch {
		case o.BatchRows > 512:
			o.BatchRows /= 2
		case o.ProbeRows > 8192:
			o.ProbeRows /= 2
		case o.Sketch.SampleSize > 1000:
			o.Sketch.SampleSize = max(1000, o.Sketch.SampleSize/2)
			o.Criteria.GapSample = min(o.Criteria.GapSample, o.Sketch.SampleSize)
		case o.Sketch.CoresetSize > minCoreset:
			o.Sketch.CoresetSize = max(minCoreset, o.Sketch.CoresetSize*3/4)
		case o.Workers > 1:
			o.Workers--
		default:
			return o, fmt.Errorf("%w: %s is too small for %d columns (at least %s is needed)",
				ErrMemoryLimit, FormatBytes(o.Memory), ds.Dims(), FormatBytes(PeakMemory(ds, o)))
		}
	}
	return o, nil
}

// ParseBytes reads a size such as 512MiB, 2GiB, 800MB or 1048576. A bare K, M, G or T is binary
// (512M = 512MiB, 2G = 2GiB), as in most command-line tools (common practice); KB, MB, GB and TB
// are decimal.
func ParseBytes(s string) (int64, error) {
	t := strings.TrimSpace(s)
	mult := int64(1)
	for _, u := range []struct {
		suffix string
		mult   int64
	}{{"KiB", 1 << 10}, {"MiB", 1 << 20}, {"GiB", 1 << 30}, {"TiB", 1 << 40}, {"KB", 1e3}, {"MB", 1e6}, {"GB", 1e9}, {"TB", 1e12},
		{"K", 1 << 10}, {"M", 1 << 20}, {"G", 1 << 30}, {"T", 1 << 40}, {"B", 1}} {
		if strings.HasSuffix(t, u.suffix) {
			t, mult = strings.TrimSpace(strings.TrimSuffix(t, u.suffix)), u.mult
			break
		}
	}
	v, err := strconv.ParseFloat(t, 64)
	if err != nil || !(v > 0) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("want a positive size such as 512MiB or 2GiB, got %q", s)
	}
	if b := v * float64(mult); !(b < math.MaxInt64/2) {
		return 0, fmt.Errorf("size %q is beyond any machine (at most 4 EiB)", s)
	}
	return int64(v * float64(mult)), nil
}

// FormatBytes writes n in binary units.
func FormatBytes(n int64) string {
	switch {
	case n >= 1<<30:
		return fmt.Sprintf("%.1f GiB", float64(n)/(1<<30))
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MiB", float64(n)/(1<<20))
	case n >= 1<<10:
		return fmt.Sprintf("%.1f KiB", float64(n)/(1<<10))
	}
	return fmt.Sprintf("%d B", n)
}
