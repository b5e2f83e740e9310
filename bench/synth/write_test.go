package synth

import (
	"bytes"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/memory"
	"github.com/apache/arrow/go/v17/parquet"
	"github.com/apache/arrow/go/v17/parquet/compress"
	"github.com/apache/arrow/go/v17/parquet/file"
)

var allFormats = []Format{Parquet, ArrowFile, ArrowStream}

// loadFile is the content of one WriteLoads file.
type loadFile struct {
	ids, tariffs []string
	days         []arrow.Date32
	x            []float64 // row-major, NaN for null
}

func readLoadFile(t *testing.T, path string, f Format) loadFile {
	t.Helper()
	var lf loadFile
	var cols [Hours][]float64
	schema := forEachRecord(t, path, f, func(rec arrow.Record) {
		for i := range int(rec.NumRows()) {
			lf.ids = append(lf.ids, rec.Column(0).(*array.String).Value(i))
			lf.days = append(lf.days, rec.Column(1).(*array.Date32).Value(i))
			lf.tariffs = append(lf.tariffs, rec.Column(2).(*array.String).Value(i))
		}
		for h := range Hours {
			cols[h] = float64Column(cols[h], rec.Column(3+h))
		}
	})
	if !sameFields(schema, LoadSchema()) {
		t.Fatalf("%s: schema\n%v\nwant\n%v", path, schema, LoadSchema())
	}
	lf.x = make([]float64, len(lf.ids)*Hours)
	for h := range Hours {
		for i, v := range cols[h] {
			lf.x[i*Hours+h] = v
		}
	}
	return lf
}

func TestWriteLoadsRoundTrip(t *testing.T) {
	for _, f := range allFormats {
		t.Run(f.String(), func(t *testing.T) {
			o := smallLoads(2500)
			o.Archetypes, o.HeatWave, o.NullShare = 6, 0.1, 0.05
			o.RowGroup, o.Partitions, o.Format = 1000, 2, f
			dir := t.TempDir()
			paths, err := WriteLoads(dir, o)
			if err != nil {
				t.Fatal(err)
			}
			wantPaths := []string{
				filepath.Join(dir, "day=2026-11-28", "part-000."+f.Ext()),
				filepath.Join(dir, "day=2026-11-29", "part-000."+f.Ext()),
			}
			if !slices.Equal(paths, wantPaths) {
				t.Fatalf("paths %v, want %v", paths, wantPaths)
			}
			g, err := newLoadGen(o)
			if err != nil {
				t.Fatal(err)
			}
			for p, path := range paths {
				lf := readLoadFile(t, path, f)
				x, labels := Loads(o, p)
				if i := sameFloats(lf.x, x); i >= 0 {
					t.Fatalf("%s: value %d (row %d, h%02d) read %v, Loads %v", path, i, i/Hours, i%Hours, lf.x[i], x[i])
				}
				wantDay := arrow.Date32FromTime(o.Start.AddDate(0, 0, p))
				for r := range lf.ids {
					if want := string(g.appendMeterID(nil, g.home(r))); lf.ids[r] != want {
						t.Fatalf("row %d: meter_id %q, want %q", r, lf.ids[r], want)
					}
					if lf.days[r] != wantDay {
						t.Fatalf("row %d: day %v, want %v", r, lf.days[r], wantDay)
					}
					if !slices.Contains(tariffNames[:], lf.tariffs[r]) {
						t.Fatalf("row %d: tariff %q", r, lf.tariffs[r])
					}
				}
				if got := recordBatchRows(t, path, f); !slices.Equal(got, []int{1000, 1000, 500}) {
					t.Errorf("%s: batches of %v rows, want [1000 1000 500]", path, got)
				}
				if len(labels) != len(lf.ids) {
					t.Fatalf("%d rows read, Loads has %d", len(lf.ids), len(labels))
				}
			}
		})
	}
}

func TestWriteLoadsSortedMeterIDs(t *testing.T) {
	o := smallLoads(3000)
	o.Archetypes, o.HeatWave, o.RowGroup = 6, 0.1, 700
	byID := func(order Order) (ids []string, labels []int, x []float64) {
		o.Order = order
		paths, err := WriteLoads(t.TempDir(), o)
		if err != nil {
			t.Fatal(err)
		}
		lf := readLoadFile(t, paths[0], Parquet)
		x0, l0 := Loads(o, 0)
		idx := make([]int, len(lf.ids))
		for i := range idx {
			idx[i] = i
		}
		slices.SortFunc(idx, func(a, b int) int { return strings.Compare(lf.ids[a], lf.ids[b]) })
		for _, i := range idx {
			ids = append(ids, lf.ids[i])
			labels = append(labels, l0[i])
			x = append(x, x0[i*Hours:(i+1)*Hours]...)
		}
		if order == Sorted && !slices.IsSorted(lf.ids) {
			t.Error("Sorted file is not in meter_id order")
		}
		return ids, labels, x
	}
	idS, labS, xS := byID(Sorted)
	idH, labH, xH := byID(Shuffled)
	if !contiguous(labS) || !contiguous(labH) {
		t.Error("sorting by meter_id does not group archetypes")
	}
	if !slices.Equal(idS, idH) || !slices.Equal(labS, labH) || sameFloats(xS, xH) >= 0 {
		t.Error("Sorted and Shuffled files do not hold the same households")
	}
}

func TestWriteDeterministic(t *testing.T) {
	for _, f := range allFormats {
		t.Run(f.String(), func(t *testing.T) {
			o := smallLoads(3000)
			o.Format, o.RowGroup = f, 1024
			m := MixtureOptions{Rows: 5000, Dims: 4, K: 3, Separation: 5, RowGroup: 2000, Format: f, Seed: 7}
			read := func(lo LoadOptions, mo MixtureOptions) (loads, mix []byte) {
				dir := t.TempDir()
				paths, err := WriteLoads(dir, lo)
				if err != nil {
					t.Fatal(err)
				}
				mp := filepath.Join(dir, "mix."+f.Ext())
				if err := WriteMixture(mp, mo); err != nil {
					t.Fatal(err)
				}
				a, err := os.ReadFile(paths[0])
				if err != nil {
					t.Fatal(err)
				}
				b, err := os.ReadFile(mp)
				if err != nil {
					t.Fatal(err)
				}
				return a, b
			}
			l1, m1 := read(o, m)
			l2, m2 := read(o, m)
			if !bytes.Equal(l1, l2) {
				t.Error("WriteLoads: same options, different bytes")
			}
			if !bytes.Equal(m1, m2) {
				t.Error("WriteMixture: same options, different bytes")
			}
			o.Seed++
			m.Seed++
			l3, m3 := read(o, m)
			if bytes.Equal(l1, l3) || bytes.Equal(m1, m3) {
				t.Error("a different seed gives the same bytes")
			}
		})
	}
}

func TestParquetEncoding(t *testing.T) {
	for _, tc := range []struct {
		c    Compression
		want compress.Compression
	}{{Snappy, compress.Codecs.Snappy}, {Zstd, compress.Codecs.Zstd}, {None, compress.Codecs.Uncompressed}} {
		t.Run(tc.c.String(), func(t *testing.T) {
			o := smallLoads(2000)
			o.Compression = tc.c
			paths, err := WriteLoads(t.TempDir(), o)
			if err != nil {
				t.Fatal(err)
			}
			mp := filepath.Join(t.TempDir(), "m.parquet")
			if err := WriteMixture(mp, MixtureOptions{Rows: 1000, Dims: 3, K: 2, Compression: tc.c}); err != nil {
				t.Fatal(err)
			}
			for _, path := range []string{paths[0], mp} {
				r, err := file.OpenParquetFile(path, false)
				if err != nil {
					t.Fatal(err)
				}
				rg := r.MetaData().RowGroup(0)
				for j := range rg.NumColumns() {
					cc, err := rg.ColumnChunk(j)
					if err != nil {
						t.Fatal(err)
					}
					name := cc.PathInSchema().String()
					if cc.Compression() != tc.want {
						t.Errorf("%s %s: codec %v, want %v", path, name, cc.Compression(), tc.want)
					}
					dict := slices.Contains(cc.Encodings(), parquet.Encodings.RLEDict) ||
						slices.Contains(cc.Encodings(), parquet.Encodings.PlainDict)
					if wantDict := name == "tariff"; dict != wantDict {
						t.Errorf("%s %s: dictionary %v, want %v (encodings %v)", path, name, dict, wantDict, cc.Encodings())
					}
				}
				r.Close()
			}
		})
	}
}

func TestWriteAtomic(t *testing.T) {
	dir := t.TempDir()
	o := smallLoads(1500)
	o.Partitions = 3
	if _, err := WriteLoads(dir, o); err != nil {
		t.Fatal(err)
	}
	var names []string
	filepath.WalkDir(dir, func(path string, d os.DirEntry, err error) error {
		if !d.IsDir() {
			rel, _ := filepath.Rel(dir, path)
			names = append(names, rel)
		}
		return err
	})
	want := []string{"day=2026-11-28/part-000.parquet", "day=2026-11-29/part-000.parquet", "day=2026-11-30/part-000.parquet"}
	if !slices.Equal(names, want) {
		t.Errorf("files %v, want %v (no temporary files left)", names, want)
	}

	// A directory that does not exist is an error naming the path, with no file left.
	bad := filepath.Join(dir, "missing", "m.parquet")
	err := WriteMixture(bad, MixtureOptions{Rows: 10, Dims: 2, K: 2})
	if err == nil || !strings.Contains(err.Error(), "missing") || !strings.HasPrefix(err.Error(), "synth: ") {
		t.Errorf("WriteMixture into a missing directory: %v", err)
	}
	// A file where WriteLoads needs a directory.
	blocker := filepath.Join(dir, "blocked")
	if err := os.WriteFile(blocker, nil, 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := WriteLoads(blocker, o); err == nil || !strings.Contains(err.Error(), "blocked") {
		t.Errorf("WriteLoads under a file: %v", err)
	}
}

// sameFields compares names, types and nullability (Parquet adds field-id metadata).
func sameFields(a, b *arrow.Schema) bool {
	if a.NumFields() != b.NumFields() {
		return false
	}
	for i := range a.NumFields() {
		fa, fb := a.Field(i), b.Field(i)
		if fa.Name != fb.Name || !arrow.TypeEqual(fa.Type, fb.Type) || fa.Nullable != fb.Nullable {
			return false
		}
	}
	return true
}

// TestWriteReleasesMemory checks with arrow's checked allocator that every builder,
// array and record is released, for both generators and every format.
func TestWriteReleasesMemory(t *testing.T) {
	var checked []*memory.CheckedAllocator
	saved := newAllocator
	newAllocator = func() memory.Allocator {
		c := memory.NewCheckedAllocator(memory.NewGoAllocator())
		checked = append(checked, c)
		return c
	}
	defer func() { newAllocator = saved }()
	for _, f := range allFormats {
		o := smallLoads(3000)
		o.Format, o.RowGroup, o.NullShare = f, 1000, 0.1
		if _, err := WriteLoads(t.TempDir(), o); err != nil {
			t.Fatal(err)
		}
		m := MixtureOptions{Rows: 3000, Dims: 3, K: 2, RowGroup: 1000, Format: f, Nullable: true, NullShare: 0.1}
		if err := WriteMixture(filepath.Join(t.TempDir(), "m"), m); err != nil {
			t.Fatal(err)
		}
	}
	if len(checked) != 6 {
		t.Fatalf("%d allocators used, want 6", len(checked))
	}
	for i, c := range checked {
		if n := c.CurrentAlloc(); n != 0 {
			t.Errorf("file %d: %d bytes not released", i, n)
		}
	}
}

// TestWritePointsRoundTrip: the points come back in order, column by column, as float64.
func TestWritePointsRoundTrip(t *testing.T) {
	x := []float64{1, -2, 3.5, 4e10, -5e-300, 6, 7, 8}
	path := filepath.Join(t.TempDir(), "points.parquet")
	if err := WritePoints(path, x, 2); err != nil {
		t.Fatal(err)
	}
	var got []float64
	schema := forEachRecord(t, path, Parquet, func(rec arrow.Record) {
		cols := make([][]float64, rec.NumCols())
		for j := range cols {
			cols[j] = float64Column(nil, rec.Column(j))
		}
		for i := range int(rec.NumRows()) {
			for j := range cols {
				got = append(got, cols[j][i])
			}
		}
	})
	if schema.NumFields() != 2 || sameFloats(got, x) != -1 {
		t.Errorf("schema %v, rows %v; want 2 columns holding %v", schema, got, x)
	}
	if err := WritePoints(path, x[:3], 2); err == nil {
		t.Error("3 values as rows of 2: no error")
	}
}

// TestWriteMixtureVector: with Vector set, each row is one list of Dims float32 values equal to
// the mixture's row.
func TestWriteMixtureVector(t *testing.T) {
	opt := DefaultMixtureOptions()
	opt.Rows, opt.Dims, opt.RowGroup, opt.Vector = 300, 8, 128, "emb"
	path := filepath.Join(t.TempDir(), "vec.parquet")
	if err := WriteMixture(path, opt); err != nil {
		t.Fatal(err)
	}
	want, _ := Mixture(opt)
	var got []float64
	schema := forEachRecord(t, path, Parquet, func(rec arrow.Record) {
		l := rec.Column(0).(*array.List)
		v := l.ListValues().(*array.Float32)
		for i := range l.Len() {
			lo, hi := l.ValueOffsets(i)
			if hi-lo != int64(opt.Dims) {
				t.Fatalf("row %d holds %d values, want %d", i, hi-lo, opt.Dims)
			}
			for j := lo; j < hi; j++ {
				got = append(got, float64(v.Value(int(j))))
			}
		}
	})
	if schema.NumFields() != 1 || schema.Field(0).Name != "emb" {
		t.Fatalf("schema %v, want one column emb", schema)
	}
	if len(got) != len(want) {
		t.Fatalf("%d values, want %d", len(got), len(want))
	}
	for i := range want {
		if got[i] != float64(float32(want[i])) {
			t.Fatalf("value %d = %v, want %v", i, got[i], float32(want[i]))
		}
	}
}
