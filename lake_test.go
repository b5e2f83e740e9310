package kgauge_test

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/stream/lake/laketest"
)

// lakeOptions are small estimate options for the lake table tests.
func lakeOptions() kgauge.Options {
	o := kgauge.DefaultOptions()
	o.Workers = 2
	o.Columns = []string{"x", "y"}
	o.Criteria.MaxK = 4
	o.Criteria.GapRefs = 3
	o.Criteria.GapSample = 100
	o.Criteria.Anchors = 50
	o.Sketch.CoresetSize = 200
	return o
}

// sameEstimate blanks what may differ between a table and its live files named as a list: the
// timings, the files' partitions (from the log, or from the folder names) and the table summary.
func sameEstimate(t *testing.T, r *kgauge.Result) []byte {
	t.Helper()
	c := *r
	c.Timings = kgauge.Timings{}
	c.Tables = nil
	c.Files = nil
	for _, f := range r.Files {
		f.Partition = nil
		c.Files = append(c.Files, f)
	}
	b, err := json.Marshal(&c)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func ver(v int64) *int64 { return &v }

// TestTableEstimateEqualsLiveFiles checks item 6 of issue 18: over a Delta table the estimate equals
// the estimate over exactly its live files passed as a list, after a compaction (version 2, read
// through its Parquet checkpoint) and after an overwrite (version 3); and that reading the folder as
// files (--as-files) differs, because it reads the removed files too.
func TestTableEstimateEqualsLiveFiles(t *testing.T) {
	ctx := context.Background()
	root := filepath.Join(t.TempDir(), "sales")
	laketest.SalesTable(t, root)
	for _, c := range []struct {
		version int64
		live    []string
	}{
		{2, []string{"day=2026-11-27/a.parquet", "day=2026-11-28/d.parquet"}},
		{3, []string{"day=2026-11-27/e.parquet", "day=2026-11-28/d.parquet"}},
	} {
		o := lakeOptions()
		o.Tables.Table.Version = ver(c.version)
		got, _, err := kgauge.Estimate(ctx, []string{root}, o)
		if err != nil {
			t.Fatal(err)
		}
		var list []string
		for _, rel := range c.live {
			list = append(list, filepath.Join(root, filepath.FromSlash(rel)))
		}
		want, _, err := kgauge.Estimate(ctx, list, lakeOptions())
		if err != nil {
			t.Fatal(err)
		}
		if g, w := sameEstimate(t, got), sameEstimate(t, want); !bytes.Equal(g, w) {
			t.Errorf("version %d: the table's estimate differs from its live files':\n%s\nwant\n%s", c.version, g, w)
		}
		if len(got.Tables) != 1 || *got.Tables[0].Version != c.version || got.Tables[0].LiveFiles != 2 || got.Tables[0].PresentFiles != 6 {
			t.Errorf("version %d: tables %+v", c.version, got.Tables)
		}
		if got.Files[0].Partition["day"] == "" {
			t.Errorf("version %d: no partition from the log in %+v", c.version, got.Files[0])
		}
	}
	o := lakeOptions()
	o.Tables.AsFiles = true
	all, _, err := kgauge.Estimate(ctx, []string{root}, o)
	if err != nil {
		t.Fatal(err)
	}
	// Every stored file: a 100, b 80, c 80, d 160, e 60 and the uncommitted 10 rows.
	if all.Rows != 490 || len(all.Tables) != 0 {
		t.Errorf("--as-files read %d rows and %d tables, want 490 and none", all.Rows, len(all.Tables))
	}
}

// TestTableEstimateDeletes checks that deleted rows are out of the estimate: the rows and the exact
// means behind the scaling equal those of the live rows, for the Delta table's deletion vectors
// (computed from the invented rows) and for the Iceberg fixture's position deletes (as read by
// Apache iceberg-go's own scan, stream/lake/testdata/iceberg/expected.json).
func TestTableEstimateDeletes(t *testing.T) {
	ctx := context.Background()
	root := filepath.Join(t.TempDir(), "sales")
	laketest.SalesTable(t, root)
	deleted := map[int64]bool{100: true, 101: true, 102: true, 103: true, 104: true, 105: true, 106: true,
		107: true, 108: true, 109: true, 250: true, 1003: true, 1004: true, 1059: true}
	var n, sx, sy float64
	for _, r := range append(laketest.Rows(100, 260), laketest.Rows(1000, 1060)...) {
		if !deleted[r.ID] {
			n++
			sx += r.X
			sy += r.Y
		}
	}
	got, _, err := kgauge.Estimate(ctx, []string{root}, lakeOptions())
	if err != nil {
		t.Fatal(err)
	}
	checkMeans(t, "delta", got, n, sx, sy)
	if tb := got.Tables[0]; tb.DeletedRows != 14 || *tb.Version != 4 {
		t.Errorf("delta: table %+v, want version 4 with 14 deleted rows", tb)
	}

	var raw struct {
		Table     string `json:"table"`
		Snapshots []struct {
			ID   int64   `json:"id"`
			Rows float64 `json:"rows"`
			SumX float64 `json:"sum_x"`
			SumY float64 `json:"sum_y"`
		} `json:"snapshots"`
	}
	b, err := os.ReadFile(filepath.Join("stream", "lake", "testdata", "iceberg", "expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &raw); err != nil {
		t.Fatal(err)
	}
	s := raw.Snapshots[3] // the snapshot with a position delete file
	o := lakeOptions()
	o.Tables.Table.Snapshot = s.ID
	got, _, err = kgauge.Estimate(ctx, []string{filepath.Join("stream", "lake", "testdata", "iceberg", filepath.FromSlash(raw.Table))}, o)
	if err != nil {
		t.Fatal(err)
	}
	checkMeans(t, "iceberg", got, s.Rows, s.SumX, s.SumY)
	if tb := got.Tables[0]; tb.DeletedRows != 15 || *tb.Snapshot != s.ID {
		t.Errorf("iceberg: table %+v, want snapshot %d with 15 deleted rows", tb, s.ID)
	}
}

func checkMeans(t *testing.T, name string, r *kgauge.Result, n, sx, sy float64) {
	t.Helper()
	if float64(r.Rows) != n || r.SkippedRows != 0 {
		t.Errorf("%s: %d rows (%d skipped), want %v live rows", name, r.Rows, r.SkippedRows, n)
		return
	}
	for j, want := range []float64{sx / n, sy / n} {
		if got := r.Scaling.Center[j]; math.Abs(got-want) > 1e-9*max(1, math.Abs(want)) {
			t.Errorf("%s: mean of column %d is %v, the live rows' is %v", name, j, got, want)
		}
	}
}

// TestPlanUnitsTables checks that a distributed plan reads a table's live files and carries its row
// deletes to the workers: the plan, sent through JSON as kgauge-beam sends it, builds partial
// sketches whose merge holds exactly the live rows estimate reads (rows, skipped rows and the
// exact means), for the Delta table's deletion vectors and the Iceberg fixture's position deletes.
// Without the deletes in the plan a worker finds other row counts than the plan's and stops.
func TestPlanUnitsTables(t *testing.T) {
	ctx := context.Background()
	root := filepath.Join(t.TempDir(), "sales")
	laketest.SalesTable(t, root)
	o := lakeOptions()
	o.Tables.Table.Version = ver(3)
	p, err := kgauge.PlanUnits(ctx, []string{root}, o)
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Files) != 2 || len(p.Input.Tables) != 1 || *p.Input.Tables[0].Version != 3 || p.Deletes != nil {
		t.Errorf("plan of version 3: %d files, tables %+v, deletes %v; want 2 live files of version 3 and no deletes", len(p.Files), p.Input.Tables, p.Deletes)
	}

	ice := filepath.Join("stream", "lake", "testdata", "iceberg", "warehouse", "db", "meters")
	iceOpt := lakeOptions()
	iceOpt.Tables.Table.Snapshot = 4985199244698268960 // the fixture's snapshot with a position delete file
	for _, c := range []struct {
		name    string
		path    string
		opt     kgauge.Options
		deleted int64
	}{{"delta version 4", root, lakeOptions(), 14}, {"iceberg position deletes", ice, iceOpt, 15}} {
		want, _, err := kgauge.Estimate(ctx, []string{c.path}, c.opt)
		if err != nil {
			t.Fatal(err)
		}
		plan, err := kgauge.PlanUnits(ctx, []string{c.path}, c.opt)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		enc, err := json.Marshal(plan)
		if err != nil {
			t.Fatal(err)
		}
		var back kgauge.UnitPlan
		if err := json.Unmarshal(enc, &back); err != nil {
			t.Fatal(err)
		}
		total, err := back.NewPartial()
		if err != nil {
			t.Fatal(err)
		}
		b := kgauge.NewBuilder(&back)
		for id := len(back.Units) - 1; id >= 0; id-- {
			sk, err := b.Build(ctx, id)
			if err != nil {
				t.Fatalf("%s: unit %d: %v", c.name, id, err)
			}
			if err := total.Merge(sk); err != nil {
				t.Fatal(err)
			}
		}
		got, err := kgauge.EvaluateMerged(ctx, &back, total, 0)
		if err != nil {
			t.Fatal(err)
		}
		if got.Rows != want.Rows || got.SkippedRows != 0 || plan.Input.Tables[0].DeletedRows != c.deleted {
			t.Errorf("%s: the plan's sketches hold %d rows (%d skipped), table %+v; estimate reads %d live rows, %d deleted",
				c.name, got.Rows, got.SkippedRows, plan.Input.Tables[0], want.Rows, c.deleted)
		}
		for j, w := range want.Scaling.Center {
			if g := got.Scaling.Center[j]; math.Abs(g-w) > 1e-9*max(1, math.Abs(w)) {
				t.Errorf("%s: mean of column %d is %v, estimate's %v", c.name, j, g, w)
			}
		}
	}
}
