package lake_test

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"hash/crc32"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/RoaringBitmap/roaring/v2/roaring64"
	"github.com/parquet-go/parquet-go"

	"github.com/kgauge/kgauge/stream"
	_ "github.com/kgauge/kgauge/stream/lake"
)

// dataRow is a data file's row. Delta keeps partition columns out of the data files.
type dataRow struct {
	ID int64   `parquet:"id"`
	X  float64 `parquet:"x"`
	Y  float64 `parquet:"y"`
}

// rowsFor is invented data: ids [from, to) with x and y fixed functions of the id.
func rowsFor(from, to int64) []dataRow {
	var out []dataRow
	for id := from; id < to; id++ {
		out = append(out, dataRow{ID: id, X: float64(id%7) + float64(id)/1000, Y: float64((id*37)%11) - 5})
	}
	return out
}

func writeRows(t testing.TB, path string, rows []dataRow) int64 {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	w := parquet.NewGenericWriter[dataRow](&buf, parquet.MaxRowsPerRowGroup(40))
	if _, err := w.Write(rows); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return int64(buf.Len())
}

// Checkpoint rows in the schema the Delta protocol documents for checkpoints (each action a
// struct column; PROTOCOL.md, "Checkpoint Schema"), written by the test independently of the
// reader's own structs.
type (
	ckRow struct {
		Txn      *struct{}   `parquet:"txn,optional"`
		Add      *ckAdd      `parquet:"add,optional"`
		Remove   *ckRemove   `parquet:"remove,optional"`
		MetaData *ckMeta     `parquet:"metaData,optional"`
		Protocol *ckProtocol `parquet:"protocol,optional"`
	}
	ckAdd struct {
		Path             string            `parquet:"path"`
		PartitionValues  map[string]string `parquet:"partitionValues"`
		Size             int64             `parquet:"size"`
		ModificationTime int64             `parquet:"modificationTime"`
		DataChange       bool              `parquet:"dataChange"`
		Stats            *string           `parquet:"stats,optional"`
	}
	ckRemove struct {
		Path              string `parquet:"path"`
		DeletionTimestamp int64  `parquet:"deletionTimestamp"`
		DataChange        bool   `parquet:"dataChange"`
	}
	ckMeta struct {
		ID               string            `parquet:"id"`
		SchemaString     string            `parquet:"schemaString"`
		PartitionColumns []string          `parquet:"partitionColumns,list"`
		Configuration    map[string]string `parquet:"configuration"`
		CreatedTime      int64             `parquet:"createdTime"`
	}
	ckProtocol struct {
		MinReaderVersion int32 `parquet:"minReaderVersion"`
		MinWriterVersion int32 `parquet:"minWriterVersion"`
	}
)

const deltaSchema = `{"type":"struct","fields":[{"name":"id","type":"long","nullable":false,"metadata":{}},{"name":"x","type":"double","nullable":false,"metadata":{}},{"name":"y","type":"double","nullable":false,"metadata":{}},{"name":"day","type":"string","nullable":false,"metadata":{}}]}`

// deltaBuilder writes a Delta table the way writers leave it: data files, then one JSON commit
// per version with the protocol's add/remove/metaData/protocol actions.
type deltaBuilder struct {
	t       testing.TB
	root    string
	version int
	rows    map[string][]dataRow // data file → its rows
	size    map[string]int64
}

func newDelta(t testing.TB, root string) *deltaBuilder {
	return &deltaBuilder{t: t, root: root, version: -1, rows: map[string][]dataRow{}, size: map[string]int64{}}
}

func (b *deltaBuilder) file(rel string, rows []dataRow) {
	b.rows[rel] = rows
	b.size[rel] = writeRows(b.t, filepath.Join(b.root, filepath.FromSlash(rel)), rows)
}

func addAction(rel, day string, size int64, dv map[string]any) map[string]any {
	a := map[string]any{"path": rel, "partitionValues": map[string]any{"day": day}, "size": size,
		"modificationTime": 1764288000000, "dataChange": true}
	if dv != nil {
		a["deletionVector"] = dv
	}
	return map[string]any{"add": a}
}

func removeAction(rel string, dataChange bool, dv map[string]any) map[string]any {
	r := map[string]any{"path": rel, "deletionTimestamp": 1764288000000, "dataChange": dataChange}
	if dv != nil {
		r["deletionVector"] = dv
	}
	return map[string]any{"remove": r}
}

func protocolAction(reader int, features ...string) map[string]any {
	p := map[string]any{"minReaderVersion": reader, "minWriterVersion": 2}
	if reader == 3 {
		p["minWriterVersion"] = 7
		p["readerFeatures"] = features
		p["writerFeatures"] = features
	}
	return map[string]any{"protocol": p}
}

func metaAction(conf map[string]string) map[string]any {
	return map[string]any{"metaData": map[string]any{"id": "3f2a1c9e-6b1d-4a57-9d7e-0c1b2a3d4e5f",
		"format":       map[string]any{"provider": "parquet", "options": map[string]any{}},
		"schemaString": deltaSchema, "partitionColumns": []string{"day"}, "configuration": conf,
		"createdTime": 1764288000000}}
}

// commit writes the next version's JSON commit.
func (b *deltaBuilder) commit(actions ...map[string]any) {
	b.version++
	var buf bytes.Buffer
	info := map[string]any{"commitInfo": map[string]any{"timestamp": 1764288000000 + b.version, "operation": "WRITE"}}
	for _, a := range append([]map[string]any{info}, actions...) {
		line, err := json.Marshal(a)
		if err != nil {
			b.t.Fatal(err)
		}
		buf.Write(line)
		buf.WriteByte('\n')
	}
	b.write(fmt.Sprintf("%020d.json", b.version), buf.Bytes())
}

func (b *deltaBuilder) write(name string, data []byte) {
	p := filepath.Join(b.root, "_delta_log", name)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		b.t.Fatal(err)
	}
	if err := os.WriteFile(p, data, 0o644); err != nil {
		b.t.Fatal(err)
	}
}

// checkpoint writes a Parquet checkpoint of the current version in parts parts (1: a classic
// checkpoint), holding the live files, the tombstones and the protocol and metadata.
func (b *deltaBuilder) checkpoint(parts int, live map[string]string, tombstones []string, conf map[string]string) {
	var rows []ckRow
	rows = append(rows, ckRow{Protocol: &ckProtocol{MinReaderVersion: 1, MinWriterVersion: 2}},
		ckRow{MetaData: &ckMeta{ID: "3f2a1c9e-6b1d-4a57-9d7e-0c1b2a3d4e5f", SchemaString: deltaSchema,
			PartitionColumns: []string{"day"}, Configuration: conf, CreatedTime: 1764288000000}})
	for _, rel := range slices.Sorted(mapsKeys(live)) {
		stats := fmt.Sprintf(`{"numRecords":%d}`, len(b.rows[rel]))
		rows = append(rows, ckRow{Add: &ckAdd{Path: rel, PartitionValues: map[string]string{"day": live[rel]},
			Size: b.size[rel], ModificationTime: 1764288000000, DataChange: false, Stats: &stats}})
	}
	for _, rel := range tombstones {
		rows = append(rows, ckRow{Remove: &ckRemove{Path: rel, DeletionTimestamp: 1764288000000, DataChange: true}})
	}
	per := (len(rows) + parts - 1) / parts
	for p := 0; p < parts; p++ {
		chunk := rows[min(p*per, len(rows)):min((p+1)*per, len(rows))]
		var buf bytes.Buffer
		w := parquet.NewGenericWriter[ckRow](&buf)
		if _, err := w.Write(chunk); err != nil {
			b.t.Fatal(err)
		}
		if err := w.Close(); err != nil {
			b.t.Fatal(err)
		}
		name := fmt.Sprintf("%020d.checkpoint.parquet", b.version)
		if parts > 1 {
			name = fmt.Sprintf("%020d.checkpoint.%010d.%010d.parquet", b.version, p+1, parts)
		}
		b.write(name, buf.Bytes())
	}
	last, _ := json.Marshal(map[string]any{"version": b.version, "size": len(rows)})
	b.write("_last_checkpoint", last)
}

func mapsKeys(m map[string]string) func(func(string) bool) {
	return func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	}
}

// z85Encode is ZeroMQ's Base85 (rfc.zeromq.org/spec/32), written here from the spec for the test.
func z85Encode(b []byte) string {
	const chars = "0123456789abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ.-:+=^!/*?&<>()[]{}@%$#"
	for len(b)%4 != 0 {
		b = append(b, 0)
	}
	var s strings.Builder
	for i := 0; i < len(b); i += 4 {
		v := binary.BigEndian.Uint32(b[i:])
		var grp [5]byte
		for j := 4; j >= 0; j-- {
			grp[j] = chars[v%85]
			v /= 85
		}
		s.Write(grp[:])
	}
	return s.String()
}

// dvBytes serialises rows in the protocol's RoaringBitmapArray format: the magic number, then
// the portable 64-bit roaring format.
func dvBytes(t testing.TB, rows ...uint64) []byte {
	var buf bytes.Buffer
	binary.Write(&buf, binary.LittleEndian, uint32(1681511377))
	if _, err := roaring64.BitmapOf(rows...).WriteTo(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// dvFile writes a deletion vector file (version byte, then size, data and CRC-32, big-endian) at
// root/prefix/deletion_vector_<uuid>.bin and returns the descriptor of its one vector.
func dvFile(t testing.TB, root, prefix string, uuid [16]byte, rows ...uint64) map[string]any {
	data := dvBytes(t, rows...)
	var buf bytes.Buffer
	buf.WriteByte(1)
	binary.Write(&buf, binary.BigEndian, uint32(len(data)))
	buf.Write(data)
	binary.Write(&buf, binary.BigEndian, crc32.ChecksumIEEE(data))
	name := fmt.Sprintf("deletion_vector_%x-%x-%x-%x-%x.bin", uuid[0:4], uuid[4:6], uuid[6:8], uuid[8:10], uuid[10:16])
	p := filepath.Join(root, prefix, name)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return map[string]any{"storageType": "u", "pathOrInlineDv": prefix + z85Encode(uuid[:]), "offset": 1,
		"sizeInBytes": len(data), "cardinality": len(rows)}
}

// salesTable builds the test's Delta table and returns it with its builder:
//
//	v0  protocol, metaData, add day=27/a (ids 0–99), add day=28/b (100–179)
//	v1  add day=28/c (180–259)
//	v2  compaction: remove b and c (dataChange false), add day=28/d (100–259); Parquet checkpoint
//	v3  overwrite of day 27: remove a, add day=27/e (1000–1059)
//	v4  protocol 3 with deletionVectors; d gets a vector on disk (rows 0–9 and 150), e an inline one
//
// plus day=28/zz-uncommitted.parquet, a file no commit names.
func salesTable(t testing.TB, root string) *deltaBuilder {
	b := newDelta(t, root)
	b.file("day=2026-11-27/a.parquet", rowsFor(0, 100))
	b.file("day=2026-11-28/b.parquet", rowsFor(100, 180))
	b.commit(protocolAction(1), metaAction(map[string]string{}),
		addAction("day=2026-11-27/a.parquet", "2026-11-27", b.size["day=2026-11-27/a.parquet"], nil),
		addAction("day=2026-11-28/b.parquet", "2026-11-28", b.size["day=2026-11-28/b.parquet"], nil))
	b.file("day=2026-11-28/c.parquet", rowsFor(180, 260))
	b.commit(addAction("day=2026-11-28/c.parquet", "2026-11-28", b.size["day=2026-11-28/c.parquet"], nil))
	b.file("day=2026-11-28/d.parquet", rowsFor(100, 260))
	b.commit(removeAction("day=2026-11-28/b.parquet", false, nil), removeAction("day=2026-11-28/c.parquet", false, nil),
		addAction("day=2026-11-28/d.parquet", "2026-11-28", b.size["day=2026-11-28/d.parquet"], nil))
	b.checkpoint(1, map[string]string{"day=2026-11-27/a.parquet": "2026-11-27", "day=2026-11-28/d.parquet": "2026-11-28"},
		[]string{"day=2026-11-28/b.parquet", "day=2026-11-28/c.parquet"}, map[string]string{})
	b.file("day=2026-11-27/e.parquet", rowsFor(1000, 1060))
	b.commit(removeAction("day=2026-11-27/a.parquet", true, nil),
		addAction("day=2026-11-27/e.parquet", "2026-11-27", b.size["day=2026-11-27/e.parquet"], nil))
	dDV := dvFile(t, root, "qz", [16]byte{0xd2, 0xc6, 0x39, 0xaa, 0x88, 0x16, 0x43, 0x1a, 0xaa, 0xf6, 0xd3, 0xfe, 0x25, 0x12, 0xff, 0x61},
		0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 150)
	eData := dvBytes(t, 3, 4, 59)
	eDV := map[string]any{"storageType": "i", "pathOrInlineDv": z85Encode(eData), "sizeInBytes": len(eData), "cardinality": 3}
	b.commit(protocolAction(3, "deletionVectors"),
		removeAction("day=2026-11-28/d.parquet", true, nil),
		addAction("day=2026-11-28/d.parquet", "2026-11-28", b.size["day=2026-11-28/d.parquet"], dDV),
		removeAction("day=2026-11-27/e.parquet", true, nil),
		addAction("day=2026-11-27/e.parquet", "2026-11-27", b.size["day=2026-11-27/e.parquet"], eDV))
	writeRows(t, filepath.Join(root, "day=2026-11-28", "zz-uncommitted.parquet"), rowsFor(5000, 5010))
	return b
}

// readIDs reads every live row's (id, x, y) through stream.Open, the path kgauge's pass uses.
func readIDs(t testing.TB, files []stream.File) map[int64][2]float64 {
	t.Helper()
	ds, err := stream.Open(files, stream.Options{Columns: []string{"id", "x", "y"}})
	if err != nil {
		t.Fatal(err)
	}
	defer ds.Close()
	got := map[int64][2]float64{}
	var n int64
	for _, u := range ds.Units {
		r, err := ds.OpenUnit(u)
		if err != nil {
			t.Fatal(err)
		}
		buf := make([]float64, 3*16)
		for {
			k, err := r.Read(buf)
			for i := 0; i < k; i++ {
				id := int64(buf[3*i])
				if _, dup := got[id]; dup {
					t.Errorf("row id %d read twice", id)
				}
				got[id] = [2]float64{buf[3*i+1], buf[3*i+2]}
			}
			n += int64(k)
			if err != nil {
				break
			}
		}
		r.Close()
	}
	if n != ds.Rows {
		t.Errorf("read %d rows, the dataset announced %d live rows", n, ds.Rows)
	}
	return got
}

func ver(v int64) *int64 { return &v }

func idSet(ranges ...[2]int64) []int64 {
	var out []int64
	for _, r := range ranges {
		for id := r[0]; id < r[1]; id++ {
			out = append(out, id)
		}
	}
	return out
}

func without(ids []int64, drop ...int64) []int64 {
	return slices.DeleteFunc(slices.Clone(ids), func(id int64) bool { return slices.Contains(drop, id) })
}

func TestDeltaVersions(t *testing.T) {
	root := filepath.Join(t.TempDir(), "sales")
	salesTable(t, root)
	live4 := without(idSet([2]int64{100, 260}, [2]int64{1000, 1060}),
		100, 101, 102, 103, 104, 105, 106, 107, 108, 109, 250, 1003, 1004, 1059)
	cases := []struct {
		name    string
		path    string
		opt     stream.TableOptions
		files   []string
		ids     []int64
		present int
	}{
		{"latest", root, stream.TableOptions{}, []string{"day=2026-11-27/e.parquet", "day=2026-11-28/d.parquet"}, live4, 6},
		{"v0", root, stream.TableOptions{Version: ver(0)}, []string{"day=2026-11-27/a.parquet", "day=2026-11-28/b.parquet"}, idSet([2]int64{0, 180}), 6},
		{"v1", root, stream.TableOptions{Version: ver(1)}, []string{"day=2026-11-27/a.parquet", "day=2026-11-28/b.parquet", "day=2026-11-28/c.parquet"}, idSet([2]int64{0, 260}), 6},
		{"v2 compaction (checkpoint)", root, stream.TableOptions{Version: ver(2)}, []string{"day=2026-11-27/a.parquet", "day=2026-11-28/d.parquet"}, idSet([2]int64{0, 260}), 6},
		{"v3 overwrite", root, stream.TableOptions{Version: ver(3)}, []string{"day=2026-11-27/e.parquet", "day=2026-11-28/d.parquet"}, idSet([2]int64{100, 260}, [2]int64{1000, 1060}), 6},
		{"partition folder", filepath.Join(root, "day=2026-11-28"), stream.TableOptions{}, []string{"day=2026-11-28/d.parquet"}, without(idSet([2]int64{100, 260}), 100, 101, 102, 103, 104, 105, 106, 107, 108, 109, 250), 4},
		{"where", root, stream.TableOptions{Where: []stream.KeyValue{{Key: "day", Value: "2026-11-27"}}}, []string{"day=2026-11-27/e.parquet"}, without(idSet([2]int64{1000, 1060}), 1003, 1004, 1059), 6},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			files, tables, err := stream.DiscoverWith([]string{c.path}, stream.DiscoverOptions{Table: c.opt})
			if err != nil {
				t.Fatal(err)
			}
			if len(tables) != 1 || tables[0].Format != "delta" || tables[0].Root != root {
				t.Fatalf("tables = %+v, want the Delta table at %s", tables, root)
			}
			tb := tables[0]
			want := int64(4) // the latest
			if c.opt.Version != nil {
				want = *c.opt.Version
			}
			if tb.Version != want {
				t.Errorf("version %d, want %d", tb.Version, want)
			}
			var rels []string
			for _, f := range files {
				rel, _ := filepath.Rel(root, f.Path)
				rels = append(rels, filepath.ToSlash(rel))
				day := strings.TrimPrefix(strings.Split(filepath.ToSlash(rel), "/")[0], "day=")
				if len(f.Partition) != 1 || f.Partition[0] != (stream.KeyValue{Key: "day", Value: day}) {
					t.Errorf("%s: partition %v, want day=%s from the log", rel, f.Partition, day)
				}
			}
			if !slices.Equal(rels, c.files) {
				t.Errorf("live files %v, want %v", rels, c.files)
			}
			if tb.Live != len(c.files) || tb.Present != c.present {
				t.Errorf("live/present = %d/%d, want %d/%d", tb.Live, tb.Present, len(c.files), c.present)
			}
			got := readIDs(t, files)
			if len(got) != len(c.ids) {
				t.Errorf("read %d rows, want %d", len(got), len(c.ids))
			}
			for _, id := range c.ids {
				v, ok := got[id]
				want := rowsFor(id, id+1)[0]
				if !ok || v != [2]float64{want.X, want.Y} {
					t.Errorf("row %d: got %v (present %v), want %v %v", id, v, ok, want.X, want.Y)
					break
				}
			}
		})
	}
}

// TestDeltaCheckpointOnly checks a log whose early commits were cleaned up: versions from the
// checkpoint on read through it (multi-part here), earlier ones are an error.
func TestDeltaCheckpointOnly(t *testing.T) {
	root := filepath.Join(t.TempDir(), "t")
	b := newDelta(t, root)
	b.file("p1.parquet", rowsFor(0, 10))
	b.file("p2.parquet", rowsFor(10, 20))
	b.commit(protocolAction(1), metaAction(nil), addAction("p1.parquet", "x", b.size["p1.parquet"], nil))
	b.commit(addAction("p2.parquet", "x", b.size["p2.parquet"], nil))
	b.checkpoint(3, map[string]string{"p1.parquet": "x", "p2.parquet": "x"}, nil, nil)
	b.file("p3.parquet", rowsFor(20, 30))
	b.commit(removeAction("p1.parquet", true, nil), addAction("p3.parquet", "x", b.size["p3.parquet"], nil))
	for _, v := range []int{0, 1} {
		if err := os.Remove(filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.json", v))); err != nil {
			t.Fatal(err)
		}
	}
	files, tables, err := stream.DiscoverWith([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{}})
	if err != nil {
		t.Fatal(err)
	}
	if tables[0].Version != 2 || len(files) != 2 || filepath.Base(files[0].Path) != "p2.parquet" || filepath.Base(files[1].Path) != "p3.parquet" {
		t.Errorf("got version %d files %v, want 2 and p2, p3", tables[0].Version, files)
	}
	if got := readIDs(t, files); len(got) != 20 {
		t.Errorf("read %d rows, want 20", len(got))
	}
	_, _, err = stream.DiscoverWith([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{Version: ver(0)}})
	if err == nil || !strings.Contains(err.Error(), "commit 0 is missing") {
		t.Errorf("version 0 after clean-up: %v, want an error saying commit 0 is missing", err)
	}
	_, _, err = stream.DiscoverWith([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{Version: ver(9)}})
	if err == nil || !strings.Contains(err.Error(), "version 9 does not exist (latest is 2)") {
		t.Errorf("version 9: %v", err)
	}
	// A multi-part checkpoint with a missing part is ignored; without commits 0 and 1 the table
	// then cannot be read.
	if err := os.Remove(filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.checkpoint.%010d.%010d.parquet", 1, 2, 3))); err != nil {
		t.Fatal(err)
	}
	if _, _, err = stream.DiscoverWith([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{}}); err == nil {
		t.Error("a checkpoint with a missing part was used")
	}
}

// TestDeltaRefusesFeatures checks that reader features kgauge does not implement stop the run
// with one line naming the feature.
func TestDeltaRefusesFeatures(t *testing.T) {
	cases := []struct {
		name     string
		protocol map[string]any
		conf     map[string]string
		want     string
	}{
		{"column mapping v2", protocolAction(2), map[string]string{"delta.columnMapping.mode": "name"}, `reader feature "columnMapping" (mode "name")`},
		{"column mapping v3", protocolAction(3, "columnMapping"), map[string]string{"delta.columnMapping.mode": "id"}, `reader feature "columnMapping" (mode "id")`},
		{"unknown feature", protocolAction(3, "deletionVectors", "catalogManaged"), nil, `reader feature "catalogManaged"`},
		{"reader version 4", map[string]any{"protocol": map[string]any{"minReaderVersion": 4, "minWriterVersion": 7}}, nil, "reader version 4"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			root := filepath.Join(t.TempDir(), "t")
			b := newDelta(t, root)
			b.file("p.parquet", rowsFor(0, 10))
			b.commit(c.protocol, metaAction(c.conf), addAction("p.parquet", "x", b.size["p.parquet"], nil))
			_, _, err := stream.DiscoverWith([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{}})
			if err == nil || !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
				t.Fatalf("got %v, want one line containing %s", err, c.want)
			}
			// Column mapping "none" is plain reading.
			if strings.HasPrefix(c.name, "column mapping") {
				root2 := filepath.Join(t.TempDir(), "t")
				b2 := newDelta(t, root2)
				b2.file("p.parquet", rowsFor(0, 10))
				b2.commit(c.protocol, metaAction(map[string]string{"delta.columnMapping.mode": "none"}), addAction("p.parquet", "x", b2.size["p.parquet"], nil))
				if _, _, err := stream.DiscoverWith([]string{root2}, stream.DiscoverOptions{Table: stream.TableOptions{}}); err != nil {
					t.Errorf("column mapping mode none: %v", err)
				}
			}
		})
	}
}

// TestDeltaAsFiles checks that --as-files reads every data file of the folder, as before.
func TestDeltaAsFiles(t *testing.T) {
	root := filepath.Join(t.TempDir(), "sales")
	salesTable(t, root)
	files, tables, err := stream.DiscoverWith([]string{root}, stream.DiscoverOptions{AsFiles: true, Table: stream.TableOptions{}})
	if err != nil {
		t.Fatal(err)
	}
	if len(tables) != 0 || len(files) != 6 {
		t.Errorf("as files: %d tables, %d files, want 0 and 6", len(tables), len(files))
	}
	for _, f := range files {
		if f.Deleted != nil {
			t.Errorf("%s: deletes applied to a plain file", f.Path)
		}
	}
}

// TestDeletionVectorInlineExample decodes the inline deletion vector of the Delta protocol's own
// JSON Example 3 (PROTOCOL.md, "Deletion Vectors"): it marks rows 3, 4, 7, 11, 18 and 29.
func TestDeletionVectorInlineExample(t *testing.T) {
	root := filepath.Join(t.TempDir(), "t")
	b := newDelta(t, root)
	b.file("p.parquet", rowsFor(0, 40))
	dv := map[string]any{"storageType": "i", "pathOrInlineDv": "wi5b=000010000siXQKl0rr91000f55c8Xg0@@D72lkbi5=-{L",
		"sizeInBytes": 40, "cardinality": 6}
	b.commit(protocolAction(3, "deletionVectors"), metaAction(nil), addAction("p.parquet", "x", b.size["p.parquet"], dv))
	files, _, err := stream.DiscoverWith([]string{root}, stream.DiscoverOptions{Table: stream.TableOptions{}})
	if err != nil {
		t.Fatal(err)
	}
	if got := files[0].Deleted.ToArray(); !slices.Equal(got, []uint64{3, 4, 7, 11, 18, 29}) {
		t.Errorf("deleted rows %v, want 3 4 7 11 18 29", got)
	}
	got := readIDs(t, files)
	for _, id := range []int64{3, 4, 7, 11, 18, 29} {
		if _, ok := got[id]; ok {
			t.Errorf("deleted row %d was read", id)
		}
	}
	if len(got) != 34 {
		t.Errorf("read %d rows, want 34", len(got))
	}
	// A vector whose cardinality disagrees with its descriptor is refused.
	dv["cardinality"] = 5
	root2 := filepath.Join(t.TempDir(), "t")
	b2 := newDelta(t, root2)
	b2.file("p.parquet", rowsFor(0, 40))
	b2.commit(protocolAction(3, "deletionVectors"), metaAction(nil), addAction("p.parquet", "x", b2.size["p.parquet"], dv))
	if _, _, err := stream.DiscoverWith([]string{root2}, stream.DiscoverOptions{Table: stream.TableOptions{}}); err == nil || !strings.Contains(err.Error(), "descriptor says 5") {
		t.Errorf("bad cardinality: %v", err)
	}
}
