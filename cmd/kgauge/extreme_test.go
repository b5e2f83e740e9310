package main

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
)

// threeBlobs returns invented rows of three well separated Gaussian clusters in the plane (a
// property-test input, seeded), each coordinate multiplied by factor.
func threeBlobs(n int, factor float64) (x, y []float64) {
	rng := rand.New(rand.NewPCG(14, 1))
	centres := [][2]float64{{0, 0}, {10, 0}, {5, 9}}
	for i := range n {
		c := centres[i%3]
		x = append(x, (c[0]+rng.NormFloat64())*factor)
		y = append(y, (c[1]+rng.NormFloat64())*factor)
	}
	return x, y
}

// TestExtremeMagnitudes: the same clusters in units from 1e-300 to 1e300 (squares of 1e154 and
// more overflow float64, squares of 1e-154 and less underflow) give the same verdict under the
// default scaling, through estimate and plan, with no panic and no internal error. Before issue 14
// the large factors panicked in k-means++ seeding and 1e-300 was called k = 1.
func TestExtremeMagnitudes(t *testing.T) {
	dir := t.TempDir()
	var ks []int
	for _, factor := range []float64{1e-300, 1, 1e150, 1e300} {
		path := filepath.Join(dir, fmt.Sprintf("blobs-%g.parquet", factor))
		x, y := threeBlobs(900, factor)
		xyParquet(t, path, x, y, math.NaN())
		code, out, errs := run(t, "estimate", "--json", "--quiet", "--max-k", "6", "--workers", "1", path)
		if code != ExitOK {
			t.Fatalf("factor %g: exit %d: %s", factor, code, errs)
		}
		var r struct {
			K    int `json:"k"`
			PerK []struct {
				WCSS *float64 `json:"wcss"`
			} `json:"per_k"`
		}
		if err := json.Unmarshal([]byte(out), &r); err != nil {
			t.Fatalf("factor %g: %v", factor, err)
		}
		for k, s := range r.PerK {
			if s.WCSS == nil || math.IsNaN(*s.WCSS) || math.IsInf(*s.WCSS, 0) {
				t.Errorf("factor %g: k=%d WCSS %v is not finite", factor, k+1, s.WCSS)
			}
		}
		ks = append(ks, r.K)
		if code, _, errs := run(t, "plan", "--quiet", "--max-k", "6", "--workers", "1", path); code != ExitOK {
			t.Errorf("plan, factor %g: exit %d: %s", factor, code, errs)
		}
	}
	if ks[1] != 3 {
		t.Fatalf("unscaled blobs: k = %d, want 3", ks[1])
	}
	for i, k := range ks {
		if k != ks[1] {
			t.Errorf("factor %d of %v: k = %d, unscaled k = %d", i, ks, k, ks[1])
		}
	}
}

// TestRawUnrepresentable: with --scale none a column whose values cannot be squared (or whose
// spread is too small to square) is a one-line bad-input error naming the column; the same file
// under the default scaling works.
func TestRawUnrepresentable(t *testing.T) {
	dir := t.TempDir()
	for _, factor := range []float64{1e150, 1e300, 1e-300} {
		path := filepath.Join(dir, fmt.Sprintf("raw-%g.parquet", factor))
		x, y := threeBlobs(300, 1)
		for i := range y {
			y[i] *= factor
		}
		xyParquet(t, path, x, y, math.NaN())
		code, out, errs := run(t, "estimate", "--quiet", "--scale", "none", "--max-k", "4", "--workers", "1", path)
		if code != ExitInput || out != "" || !strings.Contains(errs, `column "y"`) || strings.Count(strings.TrimSpace(errs), "\n") != 0 {
			t.Errorf("factor %g: exit %d, stdout %q, stderr %q; want exit %d and one line naming column \"y\"", factor, code, out, errs, ExitInput)
		}
		if code, _, errs := run(t, "estimate", "--quiet", "--max-k", "4", "--workers", "1", path); code != ExitOK {
			t.Errorf("factor %g, default scaling: exit %d: %s", factor, code, errs)
		}
	}
}

// wideParquet writes rows of d float64 columns c0…c(d−1) (invented values).
func wideParquet(t *testing.T, path string, d, rows int) {
	t.Helper()
	fields := make([]arrow.Field, d)
	for j := range fields {
		fields[j] = arrow.Field{Name: fmt.Sprintf("c%d", j), Type: arrow.PrimitiveTypes.Float64}
	}
	i := 0
	writeParquet(t, path, arrow.NewSchema(fields, nil), func(b *array.RecordBuilder) {
		for j := range d {
			b.Field(j).(*array.Float64Builder).Append(float64((i*7+j*13)%17) + float64(i%3)*40)
		}
		i++
	}, rows)
}

// TestWideInputBounded: an input wider than kgauge.MaxColumns is refused at once (exit 3, before
// the probe) by estimate and plan, instead of spending minutes in a d×d eigen decomposition; and
// at 1000 columns a --memory bound below the width-dependent working set is refused up front
// with the figure needed.
func TestWideInputBounded(t *testing.T) {
	dir := t.TempDir()
	wide := filepath.Join(dir, "wide.parquet")
	wideParquet(t, wide, kgauge.MaxColumns+1, 40)
	for _, command := range []string{"estimate", "plan"} {
		code, out, errs := run(t, command, "--quiet", "--max-k", "4", wide)
		if code != ExitInput || out != "" || !strings.Contains(errs, "too many columns") || !strings.Contains(errs, fmt.Sprint(kgauge.MaxColumns+1)) {
			t.Errorf("%s on %d columns: exit %d, stderr %q; want exit 3 naming the column count", command, kgauge.MaxColumns+1, code, errs)
		}
	}
	ok := filepath.Join(dir, "ok.parquet")
	wideParquet(t, ok, kgauge.MaxColumns, 40)
	for _, command := range []string{"estimate", "plan"} {
		code, _, errs := run(t, command, "--quiet", "--max-k", "4", "--memory", "64MiB", ok)
		if code != ExitUsage || !strings.Contains(errs, "is needed") {
			t.Errorf("%s on %d columns with --memory 64MiB: exit %d, stderr %q; want exit 2 with the memory needed", command, kgauge.MaxColumns, code, errs)
		}
	}
}

// TestTruncatedArrowStream: an Arrow IPC stream cut inside its first message is reported as a
// truncated or corrupt stream naming the file (exit 3), not as "not a Parquet or Arrow IPC file".
func TestTruncatedArrowStream(t *testing.T) {
	dir := t.TempDir()
	full := filepath.Join(dir, "full.arrows")
	opt := synth.DefaultMixtureOptions()
	opt.Rows, opt.Dims, opt.Format = 500, 3, synth.ArrowStream
	if err := synth.WriteMixture(full, opt); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(full)
	if err != nil {
		t.Fatal(err)
	}
	cut := filepath.Join(dir, "cut.arrows")
	if err := os.WriteFile(cut, data[:40], 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, errs := run(t, "estimate", "--quiet", "--max-k", "3", cut)
	if code != ExitInput || !strings.Contains(errs, "cut.arrows") || strings.Contains(errs, "not a Parquet or Arrow IPC file") {
		t.Errorf("exit %d, stderr %q; want exit 3 naming the file as a damaged Arrow stream", code, errs)
	}
}

// TestMergeDifferentColumns: merging saved sketches of different columns is bad input (exit 3)
// naming the sketch file and both column lists; before issue 14 it was an internal error (exit 1).
func TestMergeDifferentColumns(t *testing.T) {
	dir := t.TempDir()
	data := filepath.Join(dir, "blobs.parquet")
	x, y := threeBlobs(300, 1)
	xyParquet(t, data, x, y, math.NaN())
	a, b := filepath.Join(dir, "a.kgs"), filepath.Join(dir, "b.kgs")
	for _, c := range []struct{ cols, out string }{{"x", a}, {"y", b}} {
		if code, _, errs := run(t, "estimate", "--quiet", "--max-k", "3", "--columns", c.cols, "--save-sketch", c.out, data); code != ExitOK {
			t.Fatalf("estimate --columns %s: exit %d: %s", c.cols, code, errs)
		}
	}
	code, out, errs := run(t, "estimate", "--quiet", "--max-k", "3", a, b)
	if code != ExitInput || out != "" || !strings.Contains(errs, "b.kgs") || !strings.Contains(errs, "different columns") ||
		!strings.Contains(errs, `"x"`) || !strings.Contains(errs, `"y"`) {
		t.Errorf("exit %d, stderr %q; want exit 3 naming b.kgs and both columns", code, errs)
	}
}
