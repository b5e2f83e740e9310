package kgauge_test

import (
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/memory"
	apq "github.com/apache/arrow/go/v17/parquet"
	"github.com/apache/arrow/go/v17/parquet/pqarrow"

	"github.com/kgauge/kgauge"
)

// writeEmbeddings writes rows of a scalar column "site" and an embedding column "emb" (a list of
// dim float32) drawn around k separated centres, with Arrow's Parquet writer (v2 pages).
func writeEmbeddings(t *testing.T, path string, rows, dim, k int, seed uint64) {
	t.Helper()
	r := rand.New(rand.NewPCG(seed, 1))
	centres := make([][]float64, k)
	for c := range centres {
		centres[c] = make([]float64, dim)
		for j := range centres[c] {
			centres[c][j] = r.NormFloat64() * 8
		}
	}
	schema := arrow.NewSchema([]arrow.Field{
		{Name: "site", Type: arrow.PrimitiveTypes.Int32},
		{Name: "emb", Type: arrow.ListOf(arrow.PrimitiveTypes.Float32), Nullable: true},
	}, nil)
	b := array.NewRecordBuilder(memory.DefaultAllocator, schema)
	defer b.Release()
	for i := 0; i < rows; i++ {
		b.Field(0).(*array.Int32Builder).Append(int32(r.IntN(50)))
		lb := b.Field(1).(*array.ListBuilder)
		lb.Append(true)
		c := centres[i%k]
		for j := 0; j < dim; j++ {
			lb.ValueBuilder().(*array.Float32Builder).Append(float32(c[j] + r.NormFloat64()))
		}
	}
	rec := b.NewRecord()
	defer rec.Release()
	fh, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	props := apq.NewWriterProperties(apq.WithDataPageVersion(apq.DataPageV2), apq.WithMaxRowGroupLength(1000))
	w, err := pqarrow.NewFileWriter(schema, fh, props, pqarrow.DefaultWriterProps())
	if err != nil {
		t.Fatal(err)
	}
	if err := w.Write(rec); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

// TestEstimateVectorColumn: an embedding stored as one list column is a feature of its length when
// named, alone or beside a scalar column, and the estimate finds the groups the embeddings were
// drawn from (a property test on invented data: four centres 8 sd apart per coordinate in 12
// dimensions).
func TestEstimateVectorColumn(t *testing.T) {
	const dim, k = 12, 4
	p := filepath.Join(t.TempDir(), "embeddings.parquet")
	writeEmbeddings(t, p, 4000, dim, k, 9)
	o := kgauge.DefaultOptions()
	o.Workers = 2
	o.Criteria.MaxK = 8
	o.Sketch.CoresetSize = 1000
	for _, cols := range [][]string{{"emb"}, {"site", "emb"}} {
		t.Run(fmt.Sprint(cols), func(t *testing.T) {
			o.Columns = cols
			res, _, err := kgauge.Estimate(context.Background(), []string{p}, o)
			if err != nil {
				t.Fatal(err)
			}
			var want []string
			if len(cols) == 2 {
				want = append(want, "site")
			}
			for j := 0; j < dim; j++ {
				want = append(want, fmt.Sprintf("emb[%d]", j))
			}
			if !slices.Equal(res.Columns, want) {
				t.Fatalf("Columns = %v, want %v", res.Columns, want)
			}
			if res.Rows != 4000 {
				t.Fatalf("Rows = %d, want 4000", res.Rows)
			}
			// The scalar "site" is uniform noise beside the embedding; the groups must still show.
			if len(cols) == 1 && res.K != k {
				t.Fatalf("k = %d, want %d (votes %v)", res.K, k, res.Votes)
			}
		})
	}
	// Not named, the embedding is left out with the reason, and the scalar column is used alone.
	o.Columns = nil
	res, _, err := kgauge.Estimate(context.Background(), []string{p}, o)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(res.Columns, []string{"site"}) {
		t.Fatalf("Columns = %v, want [site]", res.Columns)
	}
	if len(res.Ignored) != 1 || res.Ignored[0].Name != "emb" {
		t.Fatalf("Ignored = %+v, want emb", res.Ignored)
	}
}
