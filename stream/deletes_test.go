package stream_test

import (
	"errors"
	"math"
	"testing"

	"github.com/RoaringBitmap/roaring/v2/roaring64"
	"github.com/parquet-go/parquet-go"

	"github.com/kgauge/kgauge/stream"
)

// TestDeletedRows checks the row filter of lake tables: rows in File.Deleted are left out by Read
// and ReadColumns, are not counted as skipped (also when they hold a null), and are subtracted from
// the units' row counts. The expected rows are computed from the generator, not by the reader.
func TestDeletedRows(t *testing.T) {
	g := newGen(5000, 7)
	path := tempPath(t, "del.parquet")
	writePGo(t, path, g, parquet.MaxRowsPerRowGroup(1200), parquet.PageBufferSize(2048))
	del := roaring64.New()
	for i := uint64(0); i < uint64(g.n); i++ {
		if i%5 == 1 || (i >= 2390 && i < 2410) || i == uint64(g.n-1) {
			del.Add(i)
		}
	}
	var want [][]float64
	var wantSkipped int64
	wantNulls := make([]int64, len(pgoColumns))
	for i := 0; i < g.n; i++ {
		if del.Contains(uint64(i)) {
			continue
		}
		nullA, nullB, nullH := math.IsNaN(g.a[i]), g.bNull[i], g.hNull[i]
		if nullA || nullB || nullH {
			wantSkipped++
			for j, isNull := range map[int]bool{0: nullA, 1: nullB, 7: nullH} {
				if isNull {
					wantNulls[j]++
				}
			}
			continue
		}
		want = append(want, []float64{g.a[i], g.b[i], float64(g.c[i]), float64(g.d[i]), float64(g.e[i]),
			float64(g.f[i]) / 100, float64(g.g[i]) / 1000, g.h[i]})
	}
	files, err := stream.Discover([]string{path})
	if err != nil {
		t.Fatal(err)
	}
	files[0].Deleted = del
	ds, err := stream.Open(files, stream.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if wantRows := int64(g.n) - int64(del.GetCardinality()); ds.Rows != wantRows {
		t.Errorf("Dataset.Rows = %d, want %d live rows", ds.Rows, wantRows)
	}
	for _, buf := range []int{7, 333, 4096} {
		rows, skipped, byCol, err := readRows(t, ds, buf)
		if err != nil {
			t.Fatal(err)
		}
		compareRows(t, rows, want, 0)
		if skipped != wantSkipped {
			t.Errorf("buffer %d: skipped %d rows, want %d", buf, skipped, wantSkipped)
		}
		for j := range wantNulls {
			if byCol[j] != wantNulls[j] {
				t.Errorf("buffer %d: column %s: %d nulls, want %d", buf, pgoColumns[j], byCol[j], wantNulls[j])
			}
		}
		crows, cskipped, _, err := readColumns(t, ds, buf)
		if err != nil {
			t.Fatal(err)
		}
		compareRows(t, crows, want, 0)
		if cskipped != wantSkipped {
			t.Errorf("ReadColumns %d: skipped %d rows, want %d", buf, cskipped, wantSkipped)
		}
	}
}

// TestDeletedRowsBeyondFile checks that a delete of a row the file does not have is an error
// naming the file, not a silent no-op.
func TestDeletedRowsBeyondFile(t *testing.T) {
	g := newGen(100, 3)
	path := tempPath(t, "short.parquet")
	writePGo(t, path, g)
	files, err := stream.Discover([]string{path})
	if err != nil {
		t.Fatal(err)
	}
	files[0].Deleted = roaring64.BitmapOf(3, 100)
	_, err = stream.Open(files, stream.Options{})
	var re *stream.ReadError
	if !errors.As(err, &re) || re.File != path {
		t.Fatalf("Open = %v, want a *ReadError naming %s", err, path)
	}
}
