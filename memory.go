package kgauge

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Fixed parts of the memory estimate: the Go runtime and binary, and the pages a Parquet reader
// holds per selected column (a compressed and a decoded page of about 1 MiB each).
const (
	runtimeBytes    = 48 << 20
	pageBytesPerCol = 2 << 20
)

// ErrMemoryLimit is returned when Options.Memory cannot hold even the smallest sizes.
var ErrMemoryLimit = errors.New("memory limit")

// MemoryEstimate breaks down the peak memory Build and Evaluate are expected to hold for d columns.
type MemoryEstimate struct {
	PerWorker int64 `json:"per_worker_bytes"` // sketch, read buffer and reader pages of one worker
	Criteria  int64 `json:"criteria_bytes"`   // scaled coreset and sample, fits, references
	Fixed     int64 `json:"fixed_bytes"`      // runtime and probe
	Total     int64 `json:"total_bytes"`
}

// EstimateMemory returns the expected peak memory of a run with these options on d columns.
func EstimateMemory(o Options, d int) MemoryEstimate {
	o = o.withDefaults()
	row := int64(d) * 8
	s := o.Sketch
	sumK := int64(0)
	for k := o.Criteria.MinK; k <= o.Criteria.MaxK; k++ {
		sumK += int64(k)
	}
	per := int64(s.CoresetSize+1)*(row+20) + int64(s.SampleSize)*(row+20) +
		int64(o.BatchRows)*row + int64(s.MiniBatchSize)*(row+4) + 2*sumK*row + int64(d*d)*16 +
		int64(d)*pageBytesPerCol
	c := o.Criteria
	// The width terms: the covariance, its eigenvectors and the decomposition's workspace (d×d each).
	crit := 4*int64(d)*int64(d)*8 +
		4*int64(s.CoresetSize)*row + 2*int64(s.SampleSize)*row + 2*int64(c.GapSample)*row*int64(max(1, o.Workers)) +
		int64(c.Anchors)*int64(s.CoresetSize)*8/16 + sumK*row*4
	fixed := int64(runtimeBytes) + int64(o.ProbeRows)*row*2
	m := MemoryEstimate{PerWorker: per, Criteria: crit, Fixed: fixed}
	m.Total = int64(o.Workers)*per + max(crit, 0) + fixed
	return m
}

// fitMemory shrinks the sizes that cost memory until the estimate fits o.Memory, in this order:
// read batch, probe, uniform sample, coreset. It fails when even the smallest sizes do not fit.
func (o Options) fitMemory(d int) (Options, error) {
	if o.Memory <= 0 {
		return o, nil
	}
	o = o.withDefaults()
	minCoreset := max(1000, 2*o.Criteria.MaxK)
	for EstimateMemory(o, d).Total > o.Memory {
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
				ErrMemoryLimit, FormatBytes(o.Memory), d, FormatBytes(EstimateMemory(o, d).Total))
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
