package kgauge

import (
	"context"
	"io"
	"math"
	"math/rand/v2"
	"path/filepath"
	"reflect"
	"slices"
	"testing"

	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/stream"
	"gonum.org/v1/gonum/stat"
)

// TestProbeIndependentOfWorkers: the probe reads its first units on several goroutines, yet its
// rows, and so the scale and the starting centres, are those of reading them one after the
// other; and it reads what its limits say: ProbeRows spread over ProbeUnits units, further units
// only while the rows are fewer than 2 MaxK.
func TestProbeIndependentOfWorkers(t *testing.T) {
	dir := t.TempDir()
	for _, tc := range []struct {
		name           string
		rows, rowGroup int
		probeRows      int
		wantRows       int64
	}{
		{"many units", 20_000, 1000, 1600, 1600}, // 16 of 20 units, 100 rows each
		{"few units", 3000, 1000, 1600, 300},     // all 3 units, 100 rows each
		{"small units", 1000, 40, 1600, 16 * 40}, // 16 units of 40 rows: enough rows, no more units
		{"tiny units", 200, 2, 1600, 40},         // 16 units of 2 rows, then one more at a time until 2 MaxK = 40
	} {
		path := filepath.Join(dir, tc.name+".parquet")
		o := synth.DefaultMixtureOptions()
		o.Rows, o.Dims, o.K, o.RowGroup, o.Seed = tc.rows, 4, 3, tc.rowGroup, 5
		if err := synth.WriteMixture(path, o); err != nil {
			t.Fatal(err)
		}
		var got []probeResult
		for _, workers := range []int{1, 2, 5} {
			opt := DefaultOptions()
			opt.Workers, opt.ProbeRows = workers, tc.probeRows
			op, err := Open([]string{path}, opt)
			if err != nil {
				t.Fatal(err)
			}
			units := stream.Shuffle(op.Dataset.Units, op.Options.Seed)
			pr, err := probe(context.Background(), op.Dataset, units, op.Options)
			if err != nil {
				t.Fatalf("%s, %d workers: %v", tc.name, workers, err)
			}
			got = append(got, probeResult{pr.Rows, pr.Center, pr.Scale, pr.Init})
			if workers == 1 {
				// The oracle: the units one after the other, in the shuffled order.
				want := oracleProbeRows(t, op.Dataset, units, op.Options)
				ref, err := ProbeFromRows(want, op.Dataset.Columns, op.Options)
				if err != nil {
					t.Fatal(err)
				}
				got = append(got, probeResult{ref.Rows, ref.Center, ref.Scale, ref.Init})
			}
			op.Dataset.Close()
		}
		if got[0].rows != tc.wantRows {
			t.Errorf("%s: probe read %d rows, want %d", tc.name, got[0].rows, tc.wantRows)
		}
		for i := 1; i < len(got); i++ {
			if !reflect.DeepEqual(got[i], got[0]) {
				t.Errorf("%s: probe %d differs from the sequential reading (0: one worker, 1: the oracle, then 2 and 5 workers)", tc.name, i)
			}
		}
	}
}

type probeResult struct {
	rows          int64
	center, scale []float64
	init          map[int][]float64
}

// oracleProbeRows reads the probe's rows the plain way: up to ceil(ProbeRows/ProbeUnits) rows
// from each unit in order, all of the first ProbeUnits units and more only while the rows are
// fewer than 2 MaxK, ProbeRows at most.
func oracleProbeRows(t *testing.T, ds *stream.Dataset, units []stream.Unit, opt Options) []float64 {
	t.Helper()
	d := ds.Dims()
	perUnit := (opt.ProbeRows + opt.ProbeUnits - 1) / opt.ProbeUnits
	var rows []float64
	for i, u := range units {
		n := len(rows) / d
		if n >= opt.ProbeRows || (i >= opt.ProbeUnits && n >= 2*opt.Criteria.MaxK) {
			break
		}
		r, err := ds.OpenUnit(u)
		if err != nil {
			t.Fatal(err)
		}
		row := make([]float64, d)
		for got := 0; got < min(perUnit, opt.ProbeRows-n); got++ {
			if m, err := r.Read(row); m == 0 || err != nil && err != io.EOF {
				break
			}
			rows = append(rows, row...)
		}
		r.Close()
	}
	return rows
}

// TestMeanStdSameBitsAsLdexp: meanStd scales a column by a power of two with a product where that
// power is a normal number, and with math.Ldexp at the ends of the exponent range; both are one
// correctly rounded operation, so the mean and spread must be bit for bit those of scaling every
// value with math.Ldexp, from subnormal columns to columns near the float64 maximum.
func TestMeanStdSameBitsAsLdexp(t *testing.T) {
	viaLdexp := func(col []float64) (float64, float64) {
		var top float64
		for _, v := range col {
			top = max(top, math.Abs(v))
		}
		_, e := math.Frexp(top)
		scaled := make([]float64, len(col))
		for i, v := range col {
			scaled[i] = math.Ldexp(v, -e)
		}
		mean, variance := stat.PopMeanVariance(scaled, nil)
		return math.Ldexp(mean, e), math.Ldexp(math.Sqrt(variance), e)
	}
	rng := rand.New(rand.NewPCG(3, 5))
	for _, mag := range []float64{5e-324, 1e-310, 1e-300, 2.3e-300, 1e-10, 1, 3.7, 1e10, 1e300, 1.7e308} {
		for _, decades := range []float64{0, 3, 20, 300} {
			col := make([]float64, 257)
			for i := range col {
				// Both signs, spread over up to that many decades below the column's magnitude.
				col[i] = mag * (rng.Float64()*2 - 1) * math.Pow(10, -decades*rng.Float64())
			}
			col[0] = mag
			wantMean, wantStd := viaLdexp(col)
			gotMean, gotStd := meanStd(slices.Clone(col))
			if math.Float64bits(gotMean) != math.Float64bits(wantMean) || math.Float64bits(gotStd) != math.Float64bits(wantStd) {
				t.Errorf("magnitude %g, %g decades: meanStd = %v, %v; with Ldexp %v, %v", mag, decades, gotMean, gotStd, wantMean, wantStd)
			}
		}
	}
}
