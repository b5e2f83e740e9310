package synth

import (
	"math"
	"path/filepath"
	"slices"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
)

// clusterStats returns per-cluster means (k*d) and counts of x.
func clusterStats(x []float64, labels []int, k, d int) ([]float64, []int) {
	mean := make([]float64, k*d)
	n := counts(labels, k)
	for i, c := range labels {
		for j := range d {
			mean[c*d+j] += x[i*d+j] / float64(n[c])
		}
	}
	return mean, n
}

func dist(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += (a[i] - b[i]) * (a[i] - b[i])
	}
	return math.Sqrt(s)
}

func TestMixtureSeparation(t *testing.T) {
	for _, tc := range []struct {
		name          string
		rows, d, k    int
		sep           float64
		shares        []float64
		allEqual      bool // every pair at sep (simplex), else only the closest pair
		wantMinWithin float64
	}{
		{"Simplex", 20_000, 8, 4, 6, nil, true, 0.15},
		{"SimplexUnbalanced", 20_000, 5, 5, 3, []float64{10, 5, 3, 1, 1}, true, 0.25},
		{"Crowded", 20_000, 2, 10, 8, nil, false, 0.2},
		{"One", 1000, 3, 1, 5, nil, true, 0.2},
	} {
		t.Run(tc.name, func(t *testing.T) {
			o := MixtureOptions{Rows: tc.rows, Dims: tc.d, K: tc.k, Separation: tc.sep, Shares: tc.shares, Seed: 3}
			x, labels := Mixture(o)
			mean, n := clusterStats(x, labels, tc.k, tc.d)
			shares := tc.shares
			if shares == nil {
				shares = slices.Repeat([]float64{1}, tc.k)
			}
			if want := quotas(tc.rows, shares); !slices.Equal(n, want) {
				t.Errorf("cluster sizes %v, want %v", n, want)
			}
			true_, err := MixtureCentres(o)
			if err != nil {
				t.Fatal(err)
			}
			minD := math.Inf(1)
			for a := range tc.k {
				if e := dist(mean[a*tc.d:(a+1)*tc.d], true_[a*tc.d:(a+1)*tc.d]); e > tc.wantMinWithin {
					t.Errorf("cluster %d: mean %.3f from its centre", a, e)
				}
				for b := range a {
					dd := dist(mean[a*tc.d:(a+1)*tc.d], mean[b*tc.d:(b+1)*tc.d])
					minD = math.Min(minD, dd)
					if tc.allEqual && math.Abs(dd-tc.sep) > 2*tc.wantMinWithin {
						t.Errorf("clusters %d,%d: means %.3f apart, want %.1f", a, b, dd, tc.sep)
					}
				}
			}
			if tc.k > 1 && math.Abs(minD-tc.sep) > 2*tc.wantMinWithin {
				t.Errorf("closest means %.3f apart, want %.1f", minD, tc.sep)
			}
			// Unit sd within clusters.
			ss := 0.0
			for i, c := range labels {
				for j := range tc.d {
					e := x[i*tc.d+j] - mean[c*tc.d+j]
					ss += e * e
				}
			}
			if sd := math.Sqrt(ss / float64(tc.rows*tc.d)); math.Abs(sd-1) > 0.03 {
				t.Errorf("within-cluster sd %.3f, want 1", sd)
			}
		})
	}
}

func TestMixtureElongationAndScales(t *testing.T) {
	o := MixtureOptions{Rows: 20_000, Dims: 6, K: 2, Separation: 10, Elongation: 4, ScaleSpread: 2, Seed: 9}
	x, labels := Mixture(o)
	g, err := newMixGen(o)
	if err != nil {
		t.Fatal(err)
	}
	d := o.Dims
	for j, s := range g.scales {
		if s < 0.01 || s > 100 {
			t.Errorf("column %d scale %v outside 10^[-2, 2]", j, s)
		}
	}
	if lo, hi := slices.Min(g.scales), slices.Max(g.scales); hi/lo < 10 {
		t.Errorf("column scales %v spread only %.1fx", g.scales, hi/lo)
	}
	mean, _ := clusterStats(x, labels, o.K, d)
	for c := range o.K {
		// Undo the column scales, then the variance along the cluster's direction is
		// Elongation^2 and the rest stays 1 per dimension.
		u := g.dirs[c*d : (c+1)*d]
		along, total, n := 0.0, 0.0, 0
		for i, l := range labels {
			if l != c {
				continue
			}
			p := 0.0
			for j := range d {
				e := (x[i*d+j] - mean[c*d+j]) / g.scales[j]
				p += e * u[j]
				total += e * e
			}
			along += p * p
			n++
		}
		along /= float64(n)
		rest := (total/float64(n) - along) / float64(d-1)
		if math.Abs(along-16)/16 > 0.06 || math.Abs(rest-1) > 0.05 {
			t.Errorf("cluster %d: variance %.2f along its direction (want 16), %.2f across (want 1)", c, along, rest)
		}
	}
}

func TestMixtureOrderAndSeed(t *testing.T) {
	o := MixtureOptions{Rows: 3000, Dims: 3, K: 4, Separation: 5, Seed: 1}
	x1, l1 := Mixture(o)
	x2, l2 := Mixture(o)
	if sameFloats(x1, x2) >= 0 || !slices.Equal(l1, l2) {
		t.Fatal("same options give different mixtures")
	}
	if contiguous(l1) {
		t.Error("Shuffled labels are grouped")
	}
	o.Order = Sorted
	_, ls := Mixture(o)
	if !contiguous(ls) || !slices.IsSorted(ls) {
		t.Error("Sorted labels are not grouped")
	}
	if !slices.Equal(counts(l1, 4), counts(ls, 4)) {
		t.Error("order changed the cluster sizes")
	}
	o.Order, o.Seed = Shuffled, 2
	x3, _ := Mixture(o)
	if sameFloats(x1, x3) < 0 {
		t.Error("another seed gives the same mixture")
	}
}

func TestWriteMixtureRoundTrip(t *testing.T) {
	for _, tc := range []struct {
		name     string
		format   Format
		rowGroup int
		nullable bool
		nulls    float64
		batches  []int
	}{
		{"ParquetRequired", Parquet, 4000, false, 0, []int{4000, 4000, 2000}},
		{"ParquetNullable", Parquet, 3000, true, 0.1, []int{3000, 3000, 3000, 1000}},
		{"ParquetNullableNoNulls", Parquet, 0, true, 0, []int{10_000}},
		{"ArrowFile", ArrowFile, 6000, false, 0, []int{6000, 4000}},
		{"ArrowStreamNullable", ArrowStream, 2500, true, 0.05, []int{2500, 2500, 2500, 2500}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			o := MixtureOptions{Rows: 10_000, Dims: 5, K: 3, Separation: 4, Elongation: 2, ScaleSpread: 1,
				Format: tc.format, RowGroup: tc.rowGroup, Nullable: tc.nullable, NullShare: tc.nulls, Seed: 11}
			path := filepath.Join(t.TempDir(), "mix."+tc.format.Ext())
			if err := WriteMixture(path, o); err != nil {
				t.Fatal(err)
			}
			var got []float64
			cols := make([][]float64, o.Dims)
			schema := forEachRecord(t, path, tc.format, func(rec arrow.Record) {
				for j := range o.Dims {
					cols[j] = float64Column(cols[j], rec.Column(j))
				}
			})
			if !sameFields(schema, MixtureSchema(o)) || schema.Field(0).Name != "x00" {
				t.Fatalf("schema %v, want %v", schema, MixtureSchema(o))
			}
			got = make([]float64, o.Rows*o.Dims)
			for j, c := range cols {
				for i, v := range c {
					got[i*o.Dims+j] = v
				}
			}
			want, _ := Mixture(o)
			if i := sameFloats(got, want); i >= 0 {
				t.Fatalf("value %d read %v, Mixture %v", i, got[i], want[i])
			}
			nan := 0
			for _, v := range want {
				if math.IsNaN(v) {
					nan++
				}
			}
			share := float64(nan) / float64(len(want))
			if math.Abs(share-tc.nulls) > 0.01 || (tc.nulls == 0) != (nan == 0) {
				t.Errorf("null share %.4f, want %.2f", share, tc.nulls)
			}
			if b := recordBatchRows(t, path, tc.format); !slices.Equal(b, tc.batches) {
				t.Errorf("batches %v, want %v", b, tc.batches)
			}
		})
	}
	// The values do not depend on the row-group size or the format.
	o := MixtureOptions{Rows: 5000, Dims: 2, K: 2, Separation: 3, Seed: 5}
	a, _ := Mixture(o)
	o.RowGroup, o.Format = 7, ArrowFile
	b, _ := Mixture(o)
	if sameFloats(a, b) >= 0 {
		t.Error("row group size or format changed the values")
	}
}
