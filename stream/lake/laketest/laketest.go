// Package laketest builds lake tables for tests the way writers leave them: Delta Lake tables from
// the open protocol's documented actions (PROTOCOL.md of delta-io/delta), with invented data.
package laketest

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
)

// Row is a data file's row. Delta keeps partition columns out of the data files.
type Row struct {
	ID int64   `parquet:"id"`
	X  float64 `parquet:"x"`
	Y  float64 `parquet:"y"`
}

// Rows is invented data: ids [from, to) with x and y fixed functions of the id.
func Rows(from, to int64) []Row {
	var out []Row
	for id := from; id < to; id++ {
		out = append(out, Row{ID: id, X: float64(id%7) + float64(id)/1000, Y: float64((id*37)%11) - 5})
	}
	return out
}

// WriteRows writes rows as a Parquet file at path (row groups of 40 rows) and returns its size.
func WriteRows(t testing.TB, path string, rows []Row) int64 {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	w := parquet.NewGenericWriter[Row](&buf, parquet.MaxRowsPerRowGroup(40))
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

// Delta writes a Delta table the way writers leave it: data files, then one JSON commit
// per version with the protocol's add/remove/metaData/protocol actions.
type Delta struct {
	t       testing.TB
	root    string
	version int
	RowsOf  map[string][]Row // data file → its rows
	Size    map[string]int64
}

// NewDelta starts a Delta table at root; its first Commit is version 0.
func NewDelta(t testing.TB, root string) *Delta {
	return &Delta{t: t, root: root, version: -1, RowsOf: map[string][]Row{}, Size: map[string]int64{}}
}

// File writes a data file at rel (slash-separated, below the root) holding rows.
func (b *Delta) File(rel string, rows []Row) {
	b.RowsOf[rel] = rows
	b.Size[rel] = WriteRows(b.t, filepath.Join(b.root, filepath.FromSlash(rel)), rows)
}

// Add is an add action of the file rel in partition day, with an optional deletion vector.
func Add(rel, day string, size int64, dv map[string]any) map[string]any {
	a := map[string]any{"path": rel, "partitionValues": map[string]any{"day": day}, "size": size,
		"modificationTime": 1764288000000, "dataChange": true}
	if dv != nil {
		a["deletionVector"] = dv
	}
	return map[string]any{"add": a}
}

// Remove is a remove action of the file rel (with the deletion vector its add had, if any).
func Remove(rel string, dataChange bool, dv map[string]any) map[string]any {
	r := map[string]any{"path": rel, "deletionTimestamp": 1764288000000, "dataChange": dataChange}
	if dv != nil {
		r["deletionVector"] = dv
	}
	return map[string]any{"remove": r}
}

// Protocol is a protocol action: reader version 1 or 2, or 3 with the reader features named.
func Protocol(reader int, features ...string) map[string]any {
	p := map[string]any{"minReaderVersion": reader, "minWriterVersion": 2}
	if reader == 3 {
		p["minWriterVersion"] = 7
		p["readerFeatures"] = features
		p["writerFeatures"] = features
	}
	return map[string]any{"protocol": p}
}

// Meta is the metaData action of the test tables (partitioned by day) with a configuration.
func Meta(conf map[string]string) map[string]any {
	return map[string]any{"metaData": map[string]any{"id": "3f2a1c9e-6b1d-4a57-9d7e-0c1b2a3d4e5f",
		"format":       map[string]any{"provider": "parquet", "options": map[string]any{}},
		"schemaString": deltaSchema, "partitionColumns": []string{"day"}, "configuration": conf,
		"createdTime": 1764288000000}}
}

// Commit writes the next version's JSON commit.
func (b *Delta) Commit(actions ...map[string]any) {
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

func (b *Delta) write(name string, data []byte) {
	p := filepath.Join(b.root, "_delta_log", name)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		b.t.Fatal(err)
	}
	if err := os.WriteFile(p, data, 0o644); err != nil {
		b.t.Fatal(err)
	}
}

// Checkpoint writes a Parquet checkpoint of the current version in parts parts (1: a classic
// checkpoint), holding the live files, the tombstones and the protocol and metadata.
func (b *Delta) Checkpoint(parts int, live map[string]string, tombstones []string, conf map[string]string) {
	var rows []ckRow
	rows = append(rows, ckRow{Protocol: &ckProtocol{MinReaderVersion: 1, MinWriterVersion: 2}},
		ckRow{MetaData: &ckMeta{ID: "3f2a1c9e-6b1d-4a57-9d7e-0c1b2a3d4e5f", SchemaString: deltaSchema,
			PartitionColumns: []string{"day"}, Configuration: conf, CreatedTime: 1764288000000}})
	for _, rel := range slices.Sorted(mapsKeys(live)) {
		stats := fmt.Sprintf(`{"numRecords":%d}`, len(b.RowsOf[rel]))
		rows = append(rows, ckRow{Add: &ckAdd{Path: rel, PartitionValues: map[string]string{"day": live[rel]},
			Size: b.Size[rel], ModificationTime: 1764288000000, DataChange: false, Stats: &stats}})
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

// Z85Encode is ZeroMQ's Base85 (rfc.zeromq.org/spec/32), written here from the spec for the test.
func Z85Encode(b []byte) string {
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

// DVBytes serialises rows in the protocol's RoaringBitmapArray format: the magic number, then
// the portable 64-bit roaring format.
func DVBytes(t testing.TB, rows ...uint64) []byte {
	var buf bytes.Buffer
	binary.Write(&buf, binary.LittleEndian, uint32(1681511377))
	if _, err := roaring64.BitmapOf(rows...).WriteTo(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// DVFile writes a deletion vector file (version byte, then size, data and CRC-32, big-endian) at
// root/prefix/deletion_vector_<uuid>.bin and returns the descriptor of its one vector.
func DVFile(t testing.TB, root, prefix string, uuid [16]byte, rows ...uint64) map[string]any {
	data := DVBytes(t, rows...)
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
	return map[string]any{"storageType": "u", "pathOrInlineDv": prefix + Z85Encode(uuid[:]), "offset": 1,
		"sizeInBytes": len(data), "cardinality": len(rows)}
}

// SalesTable builds the test's Delta table and returns it with its builder:
//
//	v0  protocol, metaData, add day=27/a (ids 0–99), add day=28/b (100–179)
//	v1  add day=28/c (180–259)
//	v2  compaction: remove b and c (dataChange false), add day=28/d (100–259); Parquet checkpoint
//	v3  overwrite of day 27: remove a, add day=27/e (1000–1059)
//	v4  protocol 3 with deletionVectors; d gets a vector on disk (rows 0–9 and 150), e an inline one
//
// plus day=28/zz-uncommitted.parquet, a file no commit names.
func SalesTable(t testing.TB, root string) *Delta {
	b := NewDelta(t, root)
	b.File("day=2026-11-27/a.parquet", Rows(0, 100))
	b.File("day=2026-11-28/b.parquet", Rows(100, 180))
	b.Commit(Protocol(1), Meta(map[string]string{}),
		Add("day=2026-11-27/a.parquet", "2026-11-27", b.Size["day=2026-11-27/a.parquet"], nil),
		Add("day=2026-11-28/b.parquet", "2026-11-28", b.Size["day=2026-11-28/b.parquet"], nil))
	b.File("day=2026-11-28/c.parquet", Rows(180, 260))
	b.Commit(Add("day=2026-11-28/c.parquet", "2026-11-28", b.Size["day=2026-11-28/c.parquet"], nil))
	b.File("day=2026-11-28/d.parquet", Rows(100, 260))
	b.Commit(Remove("day=2026-11-28/b.parquet", false, nil), Remove("day=2026-11-28/c.parquet", false, nil),
		Add("day=2026-11-28/d.parquet", "2026-11-28", b.Size["day=2026-11-28/d.parquet"], nil))
	b.Checkpoint(1, map[string]string{"day=2026-11-27/a.parquet": "2026-11-27", "day=2026-11-28/d.parquet": "2026-11-28"},
		[]string{"day=2026-11-28/b.parquet", "day=2026-11-28/c.parquet"}, map[string]string{})
	b.File("day=2026-11-27/e.parquet", Rows(1000, 1060))
	b.Commit(Remove("day=2026-11-27/a.parquet", true, nil),
		Add("day=2026-11-27/e.parquet", "2026-11-27", b.Size["day=2026-11-27/e.parquet"], nil))
	dDV := DVFile(t, root, "qz", [16]byte{0xd2, 0xc6, 0x39, 0xaa, 0x88, 0x16, 0x43, 0x1a, 0xaa, 0xf6, 0xd3, 0xfe, 0x25, 0x12, 0xff, 0x61},
		0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 150)
	eData := DVBytes(t, 3, 4, 59)
	eDV := map[string]any{"storageType": "i", "pathOrInlineDv": Z85Encode(eData), "sizeInBytes": len(eData), "cardinality": 3}
	b.Commit(Protocol(3, "deletionVectors"),
		Remove("day=2026-11-28/d.parquet", true, nil),
		Add("day=2026-11-28/d.parquet", "2026-11-28", b.Size["day=2026-11-28/d.parquet"], dDV),
		Remove("day=2026-11-27/e.parquet", true, nil),
		Add("day=2026-11-27/e.parquet", "2026-11-27", b.Size["day=2026-11-27/e.parquet"], eDV))
	WriteRows(t, filepath.Join(root, "day=2026-11-28", "zz-uncommitted.parquet"), Rows(5000, 5010))
	return b
}

// V2Checkpoint writes a UUID-named v2 checkpoint of the current version in JSON whose file actions
// (adds of the live files) are in one Parquet sidecar in _delta_log/_sidecars, as PROTOCOL.md's
// "V2 Spec" example shows, with the v2Checkpoint reader feature in its protocol action.
func (b *Delta) V2Checkpoint(live map[string]string) {
	const id = "80a083e8-7026-4e79-81be-64bd76c43a11"
	var rows []ckRow
	for _, rel := range slices.Sorted(mapsKeys(live)) {
		rows = append(rows, ckRow{Add: &ckAdd{Path: rel, PartitionValues: map[string]string{"day": live[rel]},
			Size: b.Size[rel], ModificationTime: 1764288000000}})
	}
	var buf bytes.Buffer
	w := parquet.NewGenericWriter[ckRow](&buf)
	if _, err := w.Write(rows); err != nil {
		b.t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		b.t.Fatal(err)
	}
	b.write("_sidecars/3a0d65cd-4056-49b8-937b-95f9e3ee90e5.parquet", buf.Bytes())
	var js bytes.Buffer
	for _, a := range []map[string]any{
		{"checkpointMetadata": map[string]any{"version": b.version, "tags": map[string]any{}}},
		Protocol(3, "v2Checkpoint"), Meta(nil),
		{"sidecar": map[string]any{"path": "3a0d65cd-4056-49b8-937b-95f9e3ee90e5.parquet", "sizeInBytes": buf.Len(),
			"modificationTime": 1764288000000, "tags": map[string]any{}}},
	} {
		line, err := json.Marshal(a)
		if err != nil {
			b.t.Fatal(err)
		}
		js.Write(line)
		js.WriteByte('\n')
	}
	b.write(fmt.Sprintf("%020d.checkpoint.%s.json", b.version, id), js.Bytes())
}
