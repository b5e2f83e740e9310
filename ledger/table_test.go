package ledger

import (
	"bytes"
	"context"
	"encoding/json"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/stream/lake/laketest"
)

// tableTrackOptions are small estimate options for tracking the test tables (columns x and y).
func tableTrackOptions() TrackOptions {
	o := kgauge.DefaultOptions()
	o.Workers = 1
	o.Columns = []string{"x", "y"}
	o.Criteria.MaxK = 4
	o.Criteria.GapRefs = 3
	o.Criteria.GapSample = 100
	o.Criteria.Anchors = 50
	o.Sketch.CoresetSize = 200
	return TrackOptions{Estimate: o, Drift: DefaultRules()}
}

// byPartition maps the records of a run to their partitions.
func byPartition(res *TrackResult) map[string]Record {
	m := map[string]Record{}
	for _, r := range res.Profiled {
		m[r.Partition] = r
	}
	return m
}

func keys(m map[string]Record) []string {
	var out []string
	for k := range m {
		out = append(out, k)
	}
	slices.Sort(out)
	return out
}

// deltaDays writes version 0 of a Delta table partitioned by day whose data files all sit in the
// table's root folder, so that partitions can only come from the log: day 27 (ids 0–99) and day 28
// (ids 100–179).
func deltaDays(t *testing.T, root string) *laketest.Delta {
	b := laketest.NewDelta(t, root)
	b.File("part-a.parquet", laketest.Rows(0, 100))
	b.File("part-b.parquet", laketest.Rows(100, 180))
	b.Commit(laketest.Protocol(1), laketest.Meta(map[string]string{}),
		laketest.Add("part-a.parquet", "2026-11-27", b.Size["part-a.parquet"], nil),
		laketest.Add("part-b.parquet", "2026-11-28", b.Size["part-b.parquet"], nil))
	return b
}

// TestTrackDeltaTable checks item 4 of issue 18 on a Delta table: partitions come from the log's
// partition values (the files are not in KEY=VALUE folders), each record holds the table version,
// an unchanged table adds nothing, and a commit that adds a partition and overwrites another
// (remove + add) makes exactly those two profiled again; a later deletion vector makes its
// partition profiled again with the deleted rows left out.
func TestTrackDeltaTable(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	root := filepath.Join(dir, "sales")
	b := deltaDays(t, root)
	ledgerPath := filepath.Join(dir, "sales.jsonl")
	opt := tableTrackOptions()

	res, err := Track(ctx, root, ledgerPath, opt)
	if err != nil {
		t.Fatal(err)
	}
	got := byPartition(res)
	if k := keys(got); !slices.Equal(k, []string{"day=2026-11-27", "day=2026-11-28"}) {
		t.Fatalf("first run profiled %v, want the two days of the log", k)
	}
	for key, rows := range map[string]int64{"day=2026-11-27": 100, "day=2026-11-28": 80} {
		r := got[key]
		if r.Rows != rows || r.Table == nil || r.Table.Format != "delta" || r.Table.Version == nil || *r.Table.Version != 0 {
			t.Errorf("%s: rows %d, table %+v; want %d rows of delta version 0", key, r.Rows, r.Table, rows)
		}
		if len(r.PartitionValues) != 1 || r.PartitionValues[0] != (KeyValue{"day", strings.TrimPrefix(key, "day=")}) {
			t.Errorf("%s: partition values %v", key, r.PartitionValues)
		}
	}

	res, err = Track(ctx, root, ledgerPath, opt)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Profiled) != 0 || res.Known != 2 {
		t.Fatalf("unchanged table: %d profiled, %d known; want 0 and 2", len(res.Profiled), res.Known)
	}

	// Version 1: a new day, and day 28 overwritten by a smaller file.
	b.File("part-c.parquet", laketest.Rows(300, 400))
	b.File("part-b2.parquet", laketest.Rows(100, 160))
	b.Commit(laketest.Add("part-c.parquet", "2026-11-29", b.Size["part-c.parquet"], nil),
		laketest.Remove("part-b.parquet", true, nil),
		laketest.Add("part-b2.parquet", "2026-11-28", b.Size["part-b2.parquet"], nil))
	res, err = Track(ctx, root, ledgerPath, opt)
	if err != nil {
		t.Fatal(err)
	}
	got = byPartition(res)
	if k := keys(got); !slices.Equal(k, []string{"day=2026-11-28", "day=2026-11-29"}) || res.Known != 1 ||
		!slices.Equal(res.Changed, []string{"day=2026-11-28"}) {
		t.Fatalf("after version 1: profiled %v, changed %v, %d known; want days 28 (changed) and 29, day 27 known", k, res.Changed, res.Known)
	}
	if r := got["day=2026-11-28"]; r.Rows != 60 || *r.Table.Version != 1 || len(r.Files) != 1 || r.Files[0].Path != "part-b2.parquet" {
		t.Errorf("day 28 at version 1: rows %d, version %d, files %+v; want 60 rows of part-b2", r.Rows, *r.Table.Version, r.Files)
	}
	if r := got["day=2026-11-29"]; r.Rows != 100 || *r.Table.Version != 1 {
		t.Errorf("day 29 at version 1: rows %d, version %d", r.Rows, *r.Table.Version)
	}

	// Version 2: an inline deletion vector drops 5 rows of day 29.
	dv := laketest.DVBytes(t, 0, 1, 2, 3, 4)
	desc := map[string]any{"storageType": "i", "pathOrInlineDv": laketest.Z85Encode(dv), "sizeInBytes": len(dv), "cardinality": 5}
	b.Commit(laketest.Protocol(3, "deletionVectors"),
		laketest.Remove("part-c.parquet", true, nil),
		laketest.Add("part-c.parquet", "2026-11-29", b.Size["part-c.parquet"], desc))
	res, err = Track(ctx, root, ledgerPath, opt)
	if err != nil {
		t.Fatal(err)
	}
	got = byPartition(res)
	r, ok := got["day=2026-11-29"]
	if len(got) != 1 || !ok {
		t.Fatalf("after the deletion vector: profiled %v, want day 29 only", keys(got))
	}
	if r.Rows != 95 || r.SkippedRows != 0 || r.Table.DeletedRows != 5 || r.Files[0].DeletedRows != 5 || *r.Table.Version != 2 {
		t.Errorf("day 29 at version 2: rows %d (skipped %d), table %+v, file %+v; want 95 rows, 5 deleted", r.Rows, r.SkippedRows, r.Table, r.Files[0])
	}
	// The record's saved sketch is the estimate of the live rows: its row count, merged by
	// estimate, is the partition's.
	est, _, err := kgauge.Estimate(ctx, []string{filepath.Join(dir, filepath.FromSlash(r.Sketch))}, opt.Estimate)
	if err != nil {
		t.Fatal(err)
	}
	if est.Rows != 95 {
		t.Errorf("the saved sketch of day 29 holds %d rows, want 95", est.Rows)
	}

	// Older versions stay readable: --table-version 0 profiles what version 0 held, and its
	// partitions' states differ from the latest records, so they are profiled again.
	o := opt
	o.Estimate.Tables.Table.Version = new(int64)
	res, err = Track(ctx, root, ledgerPath, o)
	if err != nil {
		t.Fatal(err)
	}
	if got = byPartition(res); !slices.Equal(keys(got), []string{"day=2026-11-28"}) || *got["day=2026-11-28"].Table.Version != 0 ||
		!slices.Equal(res.Gone, []string{"day=2026-11-29"}) {
		t.Errorf("--table-version 0: profiled %v, gone %v; want day 28 at version 0, day 29 gone", keys(got), res.Gone)
	}
}

// TestTrackReadsSchema2Ledger checks the ledger schema bump: records written before schema 3 (no
// table state, as `track` wrote them for a Delta table's KEY=VALUE folders) are read; a table
// partition they recorded is left alone while it has the same live files, and profiled again
// once a commit changes them.
func TestTrackReadsSchema2Ledger(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	root := filepath.Join(dir, "sales")
	b := laketest.NewDelta(t, root)
	b.File("day=2026-11-27/a.parquet", laketest.Rows(0, 100))
	b.File("day=2026-11-28/b.parquet", laketest.Rows(100, 180))
	b.Commit(laketest.Protocol(1), laketest.Meta(map[string]string{}),
		laketest.Add("day=2026-11-27/a.parquet", "2026-11-27", b.Size["day=2026-11-27/a.parquet"], nil),
		laketest.Add("day=2026-11-28/b.parquet", "2026-11-28", b.Size["day=2026-11-28/b.parquet"], nil))
	ledgerPath := filepath.Join(dir, "sales.jsonl")
	opt := tableTrackOptions()
	if _, err := Track(ctx, root, ledgerPath, opt); err != nil {
		t.Fatal(err)
	}
	// Rewrite the ledger as schema 2 wrote it: no table, no deleted_rows.
	data, err := os.ReadFile(ledgerPath)
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	for _, line := range bytes.Split(bytes.TrimSpace(data), []byte("\n")) {
		var m map[string]any
		if err := json.Unmarshal(line, &m); err != nil {
			t.Fatal(err)
		}
		if _, ok := m["table"]; !ok {
			t.Fatalf("a schema %d record without table: %s", SchemaVersion, line)
		}
		delete(m, "table")
		m["schema"] = 2
		enc, err := json.Marshal(m)
		if err != nil {
			t.Fatal(err)
		}
		out.Write(append(enc, '\n'))
	}
	if err := os.WriteFile(ledgerPath, out.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	l, err := Open(ledgerPath)
	if err != nil {
		t.Fatalf("a schema-2 ledger: %v", err)
	}
	if len(l.Records) != 2 || l.Records[0].Schema != 2 || l.Records[0].Table != nil || !l.Has("day=2026-11-27") {
		t.Fatalf("schema-2 ledger read as %d records, first %+v", len(l.Records), l.Records[0])
	}
	res, err := Track(ctx, root, ledgerPath, opt)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Profiled) != 0 || res.Known != 2 {
		t.Fatalf("schema-2 records of unchanged partitions: %d profiled, %d known; want 0 and 2", len(res.Profiled), res.Known)
	}
	b.File("day=2026-11-28/c.parquet", laketest.Rows(200, 260))
	b.Commit(laketest.Add("day=2026-11-28/c.parquet", "2026-11-28", b.Size["day=2026-11-28/c.parquet"], nil))
	res, err = Track(ctx, root, ledgerPath, opt)
	if err != nil {
		t.Fatal(err)
	}
	if got := byPartition(res); !slices.Equal(keys(got), []string{"day=2026-11-28"}) || got["day=2026-11-28"].Rows != 140 ||
		got["day=2026-11-28"].Schema != SchemaVersion || *got["day=2026-11-28"].Table.Version != 1 {
		t.Errorf("after a commit to day 28: profiled %v (%+v)", keys(got), got["day=2026-11-28"])
	}
}

// TestTrackIcebergTable checks item 4 of issue 18 on the Iceberg fixture written by Apache
// iceberg-go (stream/lake/testdata/icegen), its current snapshot moved forward one commit at a
// time through version-hint.text: partitions by the manifests' partition values (the files sit
// below data/), a snapshot that appends to one day profiles that day again, a day deleted whole
// is reported gone, position deletes profile their day again with the rows iceberg-go's own scan
// reads (expected.json), and equality deletes are refused naming the feature.
func TestTrackIcebergTable(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	src := filepath.Join("..", "stream", "lake", "testdata", "iceberg")
	var want struct {
		Snapshots []struct {
			ID   int64 `json:"id"`
			Rows int64 `json:"rows"`
		} `json:"snapshots"`
	}
	raw, err := os.ReadFile(filepath.Join(src, "expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(raw, &want); err != nil {
		t.Fatal(err)
	}
	root := filepath.Join(dir, "meters")
	copyDir(t, filepath.Join(src, "warehouse", "db", "meters"), root)
	hint := func(v int) {
		t.Helper()
		if err := os.WriteFile(filepath.Join(root, "metadata", "version-hint.text"), []byte{byte('0' + v)}, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	ledgerPath := filepath.Join(dir, "meters.jsonl")
	opt := tableTrackOptions()
	type step struct {
		hint     int // metadata version: v2 holds the first snapshot
		profiled []string
		changed  []string
		gone     []string
		rows     map[string]int64
	}
	for i, s := range []step{
		{2, []string{"day=2026-11-27", "day=2026-11-28"}, nil, nil, map[string]int64{"day=2026-11-27": 100, "day=2026-11-28": 100}},
		{3, []string{"day=2026-11-28"}, []string{"day=2026-11-28"}, nil, map[string]int64{"day=2026-11-28": 160}},
		{4, nil, nil, []string{"day=2026-11-27"}, nil},
		{5, []string{"day=2026-11-28"}, []string{"day=2026-11-28"}, []string{"day=2026-11-27"}, map[string]int64{"day=2026-11-28": want.Snapshots[3].Rows}},
	} {
		hint(s.hint)
		res, err := Track(ctx, root, ledgerPath, opt)
		if err != nil {
			t.Fatalf("metadata v%d: %v", s.hint, err)
		}
		got := byPartition(res)
		if !slices.Equal(keys(got), s.profiled) || !slices.Equal(res.Changed, s.changed) || !slices.Equal(res.Gone, s.gone) {
			t.Errorf("metadata v%d: profiled %v, changed %v, gone %v; want %v, %v, %v", s.hint, keys(got), res.Changed, res.Gone, s.profiled, s.changed, s.gone)
		}
		for key, rows := range s.rows {
			r := got[key]
			if r.Rows != rows || r.Table == nil || r.Table.Snapshot == nil || *r.Table.Snapshot != want.Snapshots[i].ID {
				t.Errorf("metadata v%d, %s: rows %d, table %+v; want %d rows of snapshot %d", s.hint, key, r.Rows, r.Table, rows, want.Snapshots[i].ID)
			}
		}
	}
	l, err := Open(ledgerPath)
	if err != nil {
		t.Fatal(err)
	}
	if r := l.Latest("day=2026-11-28"); r.Table.DeletedRows != 15 || r.Files[0].DeletedRows+r.Files[1].DeletedRows != 15 {
		t.Errorf("day 28 with the position deletes: table %+v, files %+v; want 15 deleted rows", r.Table, r.Files)
	}
	hint(6)
	if _, err := Track(ctx, root, ledgerPath, opt); err == nil || !strings.Contains(err.Error(), "equality delete") {
		t.Errorf("a snapshot with equality deletes: %v, want a refusal naming them", err)
	}
}

// copyDir copies the folder from to to.
func copyDir(t *testing.T, from, to string) {
	t.Helper()
	err := filepath.WalkDir(from, func(p string, e fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, err := filepath.Rel(from, p)
		if err != nil {
			return err
		}
		if e.IsDir() {
			return os.MkdirAll(filepath.Join(to, rel), 0o755)
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		return os.WriteFile(filepath.Join(to, rel), b, 0o644)
	})
	if err != nil {
		t.Fatal(err)
	}
}
