// Command icegen writes the Iceberg fixture table of stream/lake's tests with
// Apache iceberg-go's own writer (its file-system "hadoop" catalog), and
// records what iceberg-go's own scan reads from each snapshot in
// expected.json, the reference the tests compare with.
//
// It is a separate module so that iceberg-go (and arrow-go v18) never enter
// kgauge's build. Regenerate the fixture from this directory with
//
//	go run . ../iceberg
//
// Data files get random names, so a rerun changes the file names but not the
// table's contents.
package main

import (
	"context"
	"encoding/json"
	"fmt"
	"iter"
	"log"
	"os"
	"path/filepath"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/iceberg-go"
	"github.com/apache/iceberg-go/catalog"
	"github.com/apache/iceberg-go/catalog/hadoop"
	"github.com/apache/iceberg-go/table"
)

// snapInfo is what iceberg-go's scan reads from one snapshot.
type snapInfo struct {
	ID        int64   `json:"id"`
	Operation string  `json:"operation"`
	Rows      int64   `json:"rows"`
	SumX      float64 `json:"sum_x"`
	SumY      float64 `json:"sum_y"`
	DataFiles int     `json:"data_files"` // files PlanFiles returns
	PosDelete int     `json:"position_delete_files"`
	EqDelete  int     `json:"equality_delete_files"`
}

func main() {
	if len(os.Args) != 2 {
		log.Fatal("usage: icegen OUTDIR")
	}
	out, err := filepath.Abs(os.Args[1])
	if err != nil {
		log.Fatal(err)
	}
	if err := os.RemoveAll(out); err != nil {
		log.Fatal(err)
	}
	ctx := context.Background()
	cat, err := hadoop.NewCatalog("fixture", filepath.Join(out, "warehouse"), nil)
	if err != nil {
		log.Fatal(err)
	}
	if err := cat.CreateNamespace(ctx, table.Identifier{"db"}, nil); err != nil {
		log.Fatal(err)
	}
	sc := iceberg.NewSchema(0,
		iceberg.NestedField{ID: 1, Name: "day", Type: iceberg.PrimitiveTypes.String, Required: false},
		iceberg.NestedField{ID: 2, Name: "id", Type: iceberg.PrimitiveTypes.Int64, Required: false},
		iceberg.NestedField{ID: 3, Name: "x", Type: iceberg.PrimitiveTypes.Float64, Required: false},
		iceberg.NestedField{ID: 4, Name: "y", Type: iceberg.PrimitiveTypes.Float64, Required: false},
	)
	spec := iceberg.NewPartitionSpec(iceberg.PartitionField{SourceIDs: []int{1}, FieldID: 1000, Name: "day", Transform: iceberg.IdentityTransform{}})
	ident := table.Identifier{"db", "meters"}
	tbl, err := cat.CreateTable(ctx, ident, sc, catalog.WithPartitionSpec(&spec),
		catalog.WithProperties(iceberg.Properties{
			"format-version":                "2",
			table.WriteDeleteModeKey:        table.WriteModeMergeOnRead,
			"write.parquet.row-group-limit": "64",
		}))
	if err != nil {
		log.Fatal(err)
	}
	var snaps []snapInfo
	record := func(t *table.Table) *table.Table {
		s := t.CurrentSnapshot()
		info := scanInfo(ctx, t, s.SnapshotID)
		info.Operation = fmt.Sprint(s.Summary.Operation)
		snaps = append(snaps, info)
		return t
	}
	// 1: two days appended.
	tbl = record(commit(ctx, tbl, func(tx *table.Transaction) error {
		return tx.AppendTable(ctx, rows(0, 100, "2026-11-27", 100, "2026-11-28"), 1000, nil)
	}))
	// 2: one more file for the second day.
	tbl = record(commit(ctx, tbl, func(tx *table.Transaction) error {
		return tx.AppendTable(ctx, rows(200, 60, "2026-11-28", 0, ""), 1000, nil)
	}))
	// 3: the first day deleted whole (its file leaves the table).
	tbl = record(commit(ctx, tbl, func(tx *table.Transaction) error {
		return tx.Delete(ctx, iceberg.EqualTo(iceberg.Reference("day"), "2026-11-27"), nil)
	}))
	// 4: some rows deleted by position (merge-on-read).
	tbl = record(commit(ctx, tbl, func(tx *table.Transaction) error {
		return tx.Delete(ctx, iceberg.LessThan(iceberg.Reference("id"), int64(115)), nil)
	}))
	// 5: equality deletes on id.
	tbl = record(commit(ctx, tbl, func(tx *table.Transaction) error {
		return tx.CommitEqualityDeletes(ctx, []int{2}, eqDeletes(), nil)
	}))
	_ = tbl
	b, err := json.MarshalIndent(map[string]any{
		"table":     "warehouse/db/meters",
		"snapshots": snaps,
	}, "", "  ")
	if err != nil {
		log.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(out, "expected.json"), append(b, '\n'), 0o644); err != nil {
		log.Fatal(err)
	}
}

func commit(ctx context.Context, t *table.Table, f func(*table.Transaction) error) *table.Table {
	tx := t.NewTransaction()
	if err := f(tx); err != nil {
		log.Fatal(err)
	}
	nt, err := tx.Commit(ctx)
	if err != nil {
		log.Fatal(err)
	}
	return nt
}

// rows returns n1 rows of day1 then n2 rows of day2, ids from id0; x and y
// are fixed functions of the id.
func rows(id0, n1 int, day1 string, n2 int, day2 string) arrow.Table {
	mem := memory.DefaultAllocator
	schema := arrow.NewSchema([]arrow.Field{
		{Name: "day", Type: arrow.BinaryTypes.String, Nullable: true},
		{Name: "id", Type: arrow.PrimitiveTypes.Int64, Nullable: true},
		{Name: "x", Type: arrow.PrimitiveTypes.Float64, Nullable: true},
		{Name: "y", Type: arrow.PrimitiveTypes.Float64, Nullable: true},
	}, nil)
	b := array.NewRecordBuilder(mem, schema)
	defer b.Release()
	add := func(id int, day string) {
		b.Field(0).(*array.StringBuilder).Append(day)
		b.Field(1).(*array.Int64Builder).Append(int64(id))
		b.Field(2).(*array.Float64Builder).Append(float64(id%7) + float64(id)/1000)
		b.Field(3).(*array.Float64Builder).Append(float64((id*37)%11) - 5)
	}
	id := id0
	for i := 0; i < n1; i++ {
		add(id, day1)
		id++
	}
	for i := 0; i < n2; i++ {
		add(id, day2)
		id++
	}
	rec := b.NewRecordBatch()
	defer rec.Release()
	return array.NewTableFromRecords(schema, []arrow.RecordBatch{rec})
}

func eqDeletes() iter.Seq2[arrow.RecordBatch, error] {
	schema := arrow.NewSchema([]arrow.Field{
		{Name: "day", Type: arrow.BinaryTypes.String, Nullable: true},
		{Name: "id", Type: arrow.PrimitiveTypes.Int64, Nullable: true},
	}, nil)
	b := array.NewRecordBuilder(memory.DefaultAllocator, schema)
	for _, id := range []int64{150, 151, 230} {
		b.Field(0).(*array.StringBuilder).Append("2026-11-28")
		b.Field(1).(*array.Int64Builder).Append(id)
	}
	rec := b.NewRecordBatch()
	b.Release()
	return func(yield func(arrow.RecordBatch, error) bool) { yield(rec, nil) }
}

// scanInfo reads snapshot id with iceberg-go's own scan.
func scanInfo(ctx context.Context, t *table.Table, id int64) snapInfo {
	scan := t.Scan(table.WithSnapshotID(id))
	tasks, err := scan.PlanFiles(ctx)
	if err != nil {
		log.Fatal(err)
	}
	info := snapInfo{ID: id, DataFiles: len(tasks)}
	seenPos, seenEq := map[string]bool{}, map[string]bool{}
	for _, tk := range tasks {
		for _, d := range tk.DeleteFiles {
			seenPos[d.FilePath()] = true
		}
		for _, d := range tk.EqualityDeleteFiles {
			seenEq[d.FilePath()] = true
		}
	}
	info.PosDelete, info.EqDelete = len(seenPos), len(seenEq)
	at, err := scan.ToArrowTable(ctx)
	if err != nil {
		log.Fatal(err)
	}
	defer at.Release()
	info.Rows = at.NumRows()
	for ci, p := range []*float64{&info.SumX, &info.SumY} {
		col := at.Column(2 + ci)
		for _, ch := range col.Data().Chunks() {
			a := ch.(*array.Float64)
			for i := 0; i < a.Len(); i++ {
				*p += a.Value(i)
			}
		}
	}
	fmt.Fprintf(os.Stderr, "snapshot %d %s: %d rows, %d files\n", id, info.Operation, info.Rows, len(tasks))
	return info
}
