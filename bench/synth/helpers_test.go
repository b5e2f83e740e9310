package synth

import (
	"context"
	"fmt"
	"math"
	"os"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/ipc"
	"github.com/apache/arrow/go/v17/arrow/memory"
	"github.com/apache/arrow/go/v17/parquet/file"
	"github.com/apache/arrow/go/v17/parquet/pqarrow"
)

// forEachRecord reads path with arrow's own readers and calls fn on every record (Parquet
// through pqarrow.ReadTable, Arrow IPC through the ipc file and stream readers). It
// returns the schema.
func forEachRecord(t *testing.T, path string, f Format, fn func(arrow.Record)) *arrow.Schema {
	t.Helper()
	mem := memory.NewGoAllocator()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	switch f {
	case Parquet:
		tbl, err := pqarrow.ReadTable(context.Background(), fh, nil, pqarrow.ArrowReadProperties{}, mem)
		if err != nil {
			t.Fatalf("pqarrow.ReadTable %s: %v", path, err)
		}
		defer tbl.Release()
		tr := array.NewTableReader(tbl, 1<<30)
		defer tr.Release()
		for tr.Next() {
			fn(tr.Record())
		}
		return tbl.Schema()
	case ArrowFile:
		r, err := ipc.NewFileReader(fh, ipc.WithAllocator(mem))
		if err != nil {
			t.Fatalf("ipc.NewFileReader %s: %v", path, err)
		}
		defer r.Close()
		for i := range r.NumRecords() {
			rec, err := r.RecordAt(i)
			if err != nil {
				t.Fatal(err)
			}
			fn(rec)
			rec.Release()
		}
		return r.Schema()
	default:
		r, err := ipc.NewReader(fh, ipc.WithAllocator(mem))
		if err != nil {
			t.Fatalf("ipc.NewReader %s: %v", path, err)
		}
		defer r.Release()
		for r.Next() {
			fn(r.Record())
		}
		if err := r.Err(); err != nil {
			t.Fatal(err)
		}
		return r.Schema()
	}
}

// recordBatchRows lists the row count of each record batch / row group of path.
func recordBatchRows(t *testing.T, path string, f Format) []int {
	t.Helper()
	if f == Parquet {
		r, err := file.OpenParquetFile(path, false)
		if err != nil {
			t.Fatal(err)
		}
		defer r.Close()
		var out []int
		for i := range r.NumRowGroups() {
			out = append(out, int(r.MetaData().RowGroup(i).NumRows()))
		}
		return out
	}
	var out []int
	forEachRecord(t, path, f, func(rec arrow.Record) { out = append(out, int(rec.NumRows())) })
	return out
}

// float64Column appends column c of rec to dst as float64 with NaN for nulls.
func float64Column(dst []float64, col arrow.Array) []float64 {
	switch a := col.(type) {
	case *array.Float32:
		for i := range a.Len() {
			if a.IsNull(i) {
				dst = append(dst, math.NaN())
			} else {
				dst = append(dst, float64(a.Value(i)))
			}
		}
	case *array.Float64:
		for i := range a.Len() {
			if a.IsNull(i) {
				dst = append(dst, math.NaN())
			} else {
				dst = append(dst, a.Value(i))
			}
		}
	default:
		panic(fmt.Sprintf("unexpected column type %T", col))
	}
	return dst
}

// sameFloats reports the first index where a and b differ (NaN equals NaN), or -1.
func sameFloats(a, b []float64) int {
	if len(a) != len(b) {
		return min(len(a), len(b))
	}
	for i := range a {
		if a[i] != b[i] && !(math.IsNaN(a[i]) && math.IsNaN(b[i])) {
			return i
		}
	}
	return -1
}

// counts returns how many labels take each value in [0, n).
func counts(labels []int, n int) []int {
	c := make([]int, n)
	for _, l := range labels {
		c[l]++
	}
	return c
}

// contiguous reports whether every label value occupies one run of consecutive rows.
func contiguous(labels []int) bool {
	seen := map[int]bool{}
	for i, l := range labels {
		if i > 0 && labels[i-1] == l {
			continue
		}
		if seen[l] {
			return false
		}
		seen[l] = true
	}
	return true
}
