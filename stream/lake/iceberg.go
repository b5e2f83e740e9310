package lake

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/RoaringBitmap/roaring/v2/roaring64"
	"github.com/hamba/avro/v2/ocf"
	"github.com/parquet-go/parquet-go"

	"github.com/kgauge/kgauge/stream"
)

// icebergMeta is the part of an Iceberg table metadata file kgauge uses.
type icebergMeta struct {
	FormatVersion     int    `json:"format-version"`
	Location          string `json:"location"`
	CurrentSnapshotID *int64 `json:"current-snapshot-id"`
	Snapshots         []struct {
		SnapshotID     int64  `json:"snapshot-id"`
		SequenceNumber int64  `json:"sequence-number"`
		ManifestList   string `json:"manifest-list"`
	} `json:"snapshots"`
	PartitionSpecs []struct {
		SpecID int `json:"spec-id"`
		Fields []struct {
			Name      string `json:"name"`
			Transform string `json:"transform"`
		} `json:"fields"`
	} `json:"partition-specs"`
}

// Avro records of manifest lists and manifests (Iceberg spec, "Manifest Lists", "Manifests"); v1
// files lack the v2 fields, which then read as zero (content 0 = data, sequence numbers 0).
type (
	icebergManifestFile struct {
		Path           string `avro:"manifest_path"`
		SpecID         int32  `avro:"partition_spec_id"`
		Content        int32  `avro:"content"`
		SequenceNumber int64  `avro:"sequence_number"`
	}
	icebergEntry struct {
		Status         int32           `avro:"status"`
		SequenceNumber *int64          `avro:"sequence_number"`
		DataFile       icebergDataFile `avro:"data_file"`
	}
	icebergDataFile struct {
		Content            int32          `avro:"content"`
		FilePath           string         `avro:"file_path"`
		FileFormat         string         `avro:"file_format"`
		Partition          map[string]any `avro:"partition"`
		RecordCount        int64          `avro:"record_count"`
		FileSizeInBytes    int64          `avro:"file_size_in_bytes"`
		ReferencedDataFile *string        `avro:"referenced_data_file"`
	}
)

// icebergFile is one live entry of the snapshot: a data file or a delete file.
type icebergFile struct {
	df     icebergDataFile
	seq    int64
	specID int32
	part   []stream.KeyValue
	key    string // spec id and partition values, for matching deletes to data files
}

type icebergTable struct {
	root     loc
	meta     *icebergMeta
	snapshot int64
	data     []icebergFile
	posDel   []icebergFile
	eqDel    []icebergFile
}

var icebergMetaRe = regexp.MustCompile(`^(?:v(\d+)|(\d+)-[0-9a-fA-F-]+)\.metadata\.json$`)

// readIceberg reads the table metadata (the version version-hint.text names, else the highest
// numbered metadata file), then the manifests of the snapshot (0: the current one).
func readIceberg(root loc, snapshot int64) (*icebergTable, error) {
	mdir := root.join("metadata")
	var name string
	if b, err := mdir.join("version-hint.text").readAll(); err == nil {
		if v, err := strconv.Atoi(strings.TrimSpace(string(b))); err == nil {
			if ok, _ := mdir.join(fmt.Sprintf("v%d.metadata.json", v)).exists(); ok {
				name = fmt.Sprintf("v%d.metadata.json", v)
			}
		}
	}
	if name == "" {
		es, err := mdir.listDir()
		if err != nil {
			return nil, err
		}
		best := -1
		for _, e := range es {
			m := icebergMetaRe.FindStringSubmatch(e.rel)
			if m == nil {
				continue
			}
			v, _ := strconv.Atoi(m[1] + m[2])
			if v > best {
				best, name = v, e.rel
			}
		}
		if name == "" {
			return nil, errors.New("iceberg table: metadata/ holds no table metadata file (gzip-compressed metadata is not read)")
		}
	}
	b, err := mdir.join(name).readAll()
	if err != nil {
		return nil, err
	}
	var meta icebergMeta
	if err := json.Unmarshal(b, &meta); err != nil {
		return nil, fmt.Errorf("iceberg metadata %s: %w", name, err)
	}
	if meta.FormatVersion < 1 || meta.FormatVersion > 2 {
		return nil, fmt.Errorf("iceberg table: format version %d, kgauge reads versions 1 and 2 (version 3 deletion vectors and row lineage are not supported)", meta.FormatVersion)
	}
	t := &icebergTable{root: root, meta: &meta}
	switch {
	case snapshot != 0:
		t.snapshot = snapshot
	case meta.CurrentSnapshotID != nil && *meta.CurrentSnapshotID != -1:
		t.snapshot = *meta.CurrentSnapshotID
	default:
		return t, nil // a table without a snapshot has no rows
	}
	list := ""
	var ids []string
	for _, s := range meta.Snapshots {
		ids = append(ids, strconv.FormatInt(s.SnapshotID, 10))
		if s.SnapshotID == t.snapshot {
			list = s.ManifestList
		}
	}
	if list == "" {
		if snapshot != 0 {
			return nil, fmt.Errorf("iceberg table: no snapshot %d (snapshots: %s)", snapshot, strings.Join(ids, ", "))
		}
		return nil, fmt.Errorf("iceberg table: current snapshot %d has no manifest list", t.snapshot)
	}
	if err := t.readManifests(list); err != nil {
		return nil, err
	}
	return t, nil
}

// resolve rebases a path written in the metadata onto the table root.
func (t *icebergTable) resolve(p string) (loc, error) {
	return resolveFile(t.root, stripFileScheme(p), stripFileScheme(t.meta.Location))
}

func stripFileScheme(p string) string {
	switch {
	case strings.HasPrefix(p, "file://"):
		return strings.TrimPrefix(p, "file://")
	case strings.HasPrefix(p, "file:/"):
		return strings.TrimPrefix(p, "file:")
	}
	return p
}

// readAvro decodes every record of an Avro object container file into T.
func readAvro[T any](l loc) (out []T, err error) {
	defer func() {
		if p := recover(); p != nil {
			out, err = nil, fmt.Errorf("iceberg: %s: unreadable Avro: %v", l, p)
		}
	}()
	b, err := l.readAll()
	if err != nil {
		return nil, fmt.Errorf("iceberg: %w", err)
	}
	dec, err := ocf.NewDecoder(bytes.NewReader(b))
	if err != nil {
		return nil, fmt.Errorf("iceberg: %s: %w", l, err)
	}
	for dec.HasNext() {
		var v T
		if err := dec.Decode(&v); err != nil {
			return nil, fmt.Errorf("iceberg: %s: %w", l, err)
		}
		out = append(out, v)
	}
	if err := dec.Error(); err != nil && !errors.Is(err, io.EOF) {
		return nil, fmt.Errorf("iceberg: %s: %w", l, err)
	}
	return out, nil
}

func (t *icebergTable) readManifests(list string) error {
	ll, err := t.resolve(list)
	if err != nil {
		return err
	}
	mfs, err := readAvro[icebergManifestFile](ll)
	if err != nil {
		return err
	}
	for _, mf := range mfs {
		ml, err := t.resolve(mf.Path)
		if err != nil {
			return err
		}
		entries, err := readAvro[icebergEntry](ml)
		if err != nil {
			return err
		}
		for _, e := range entries {
			if e.Status == 2 { // DELETED
				continue
			}
			f := icebergFile{df: e.DataFile, seq: mf.SequenceNumber, specID: mf.SpecID}
			if e.SequenceNumber != nil {
				f.seq = *e.SequenceNumber
			}
			if f.part, err = t.partition(mf.SpecID, e.DataFile.Partition); err != nil {
				return fmt.Errorf("iceberg manifest %s: %s: %w", ml, e.DataFile.FilePath, err)
			}
			f.key = strconv.Itoa(int(mf.SpecID)) + "\x00" + stream.WhereString(f.part)
			switch e.DataFile.Content {
			case 0:
				t.data = append(t.data, f)
			case 1:
				t.posDel = append(t.posDel, f)
			case 2:
				t.eqDel = append(t.eqDel, f)
			default:
				return fmt.Errorf("iceberg manifest %s: %s: unknown content type %d", ml, e.DataFile.FilePath, e.DataFile.Content)
			}
		}
	}
	return nil
}

// partition returns a file's partition values in the order of its spec, formatted as Iceberg's
// human-readable partition strings: dates for the day transform and date identity columns are
// not known here, so values are written as stored (strings as they are, numbers in decimal), with
// the day, month, year and hour transforms shown as dates.
func (t *icebergTable) partition(specID int32, values map[string]any) ([]stream.KeyValue, error) {
	for _, s := range t.meta.PartitionSpecs {
		if s.SpecID != int(specID) {
			continue
		}
		var out []stream.KeyValue
		for _, f := range s.Fields {
			v, ok := values[f.Name]
			if !ok {
				return nil, fmt.Errorf("no value for partition field %q", f.Name)
			}
			out = append(out, stream.KeyValue{Key: f.Name, Value: partitionString(v, f.Transform)})
		}
		return out, nil
	}
	return nil, fmt.Errorf("partition spec %d is not in the table metadata", specID)
}

func partitionString(v any, transform string) string {
	if m, ok := v.(map[string]any); ok && len(m) == 1 { // an Avro union decoded with its branch name
		for _, x := range m {
			v = x
		}
	}
	if v == nil {
		return ""
	}
	var n int64
	isInt := true
	switch x := v.(type) {
	case int:
		n = int64(x)
	case int32:
		n = int64(x)
	case int64:
		n = x
	case time.Time: // a date partition decoded as a time
		return x.UTC().Format("2006-01-02")
	default:
		isInt = false
	}
	if isInt {
		epoch := time.Unix(0, 0).UTC()
		switch transform {
		case "day":
			return epoch.AddDate(0, 0, int(n)).Format("2006-01-02")
		case "month":
			return epoch.AddDate(0, int(n), 0).Format("2006-01")
		case "year":
			return epoch.AddDate(int(n), 0, 0).Format("2006")
		case "hour":
			return epoch.Add(time.Duration(n) * time.Hour).Format("2006-01-02-15")
		}
		return strconv.FormatInt(n, 10)
	}
	return fmt.Sprint(v)
}

// files returns the live data files below sub matching where, with the rows their position delete
// files drop. Equality deletes that apply to a selected file are refused.
func (t *icebergTable) files(sub string, where []stream.KeyValue) ([]stream.File, int64, error) {
	var out []stream.File
	var deleted int64
	sort.Slice(t.data, func(i, j int) bool { return t.data[i].df.FilePath < t.data[j].df.FilePath })
	for _, f := range t.data {
		l, err := t.resolve(f.df.FilePath)
		if err != nil {
			return nil, 0, err
		}
		if !within(relTo(t.root, l), sub) || !stream.MatchWhere(f.part, where) {
			continue
		}
		if !strings.EqualFold(f.df.FileFormat, "PARQUET") {
			return nil, 0, fmt.Errorf("iceberg table: data file %s is %s; kgauge reads Parquet data files only", l, f.df.FileFormat)
		}
		for _, e := range t.eqDel {
			if f.seq < e.seq && (e.key == f.key || len(e.part) == 0) {
				return nil, 0, fmt.Errorf("iceberg table: equality delete file %s applies to %s; kgauge does not apply equality deletes (feature \"equality deletes\")", e.df.FilePath, f.df.FilePath)
			}
		}
		sf := stream.File{Path: l.p, Size: f.df.FileSizeInBytes, Format: stream.Parquet, Partition: f.part}
		for _, d := range t.posDel {
			if f.seq > d.seq || d.key != f.key || d.df.ReferencedDataFile != nil && *d.df.ReferencedDataFile != f.df.FilePath {
				continue
			}
			if err := t.applyPositionDeletes(d, f.df.FilePath, &sf); err != nil {
				return nil, 0, err
			}
		}
		if sf.Deleted != nil {
			deleted += int64(sf.Deleted.GetCardinality())
		}
		out = append(out, sf)
	}
	return out, deleted, nil
}

// relTo returns l relative to root in slash form ("" when l is not below root).
func relTo(root, l loc) string {
	r := strings.TrimSuffix(root.p, "/")
	if !root.remote {
		r = strings.TrimSuffix(r, string(osSep))
	}
	p := strings.TrimPrefix(l.p, r)
	if p == l.p {
		return ""
	}
	return strings.TrimLeft(strings.ReplaceAll(p, string(osSep), "/"), "/")
}

// posDeleteRow is a row of a position delete file (Iceberg spec, "Position Delete Files").
type posDeleteRow struct {
	FilePath string `parquet:"file_path"`
	Pos      int64  `parquet:"pos"`
}

// applyPositionDeletes adds to sf the rows the position delete file d deletes from dataPath.
func (t *icebergTable) applyPositionDeletes(d icebergFile, dataPath string, sf *stream.File) (err error) {
	if !strings.EqualFold(d.df.FileFormat, "PARQUET") {
		return fmt.Errorf("iceberg table: position delete file %s is %s; kgauge reads Parquet delete files only", d.df.FilePath, d.df.FileFormat)
	}
	l, err := t.resolve(d.df.FilePath)
	if err != nil {
		return err
	}
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("iceberg position delete file %s: unreadable: %v", l, p)
		}
	}()
	h, err := l.open()
	if err != nil {
		return fmt.Errorf("iceberg position delete file: %w", err)
	}
	defer h.Close()
	fi, err := h.Stat()
	if err != nil {
		return err
	}
	pf, err := parquet.OpenFile(h, fi.Size())
	if err != nil {
		return fmt.Errorf("iceberg position delete file %s: %w", l, err)
	}
	r := parquet.NewGenericReader[posDeleteRow](pf)
	defer r.Close()
	buf := make([]posDeleteRow, 1024)
	for {
		n, rerr := r.Read(buf)
		for _, row := range buf[:n] {
			if row.FilePath != dataPath {
				continue
			}
			if row.Pos < 0 {
				return fmt.Errorf("iceberg position delete file %s: negative position %d", l, row.Pos)
			}
			if sf.Deleted == nil {
				sf.Deleted = roaring64.New()
			}
			sf.Deleted.Add(uint64(row.Pos))
		}
		if rerr == io.EOF {
			return nil
		}
		if rerr != nil {
			return fmt.Errorf("iceberg position delete file %s: %w", l, rerr)
		}
	}
}

// deleteFilesWithin returns the number of live delete files below sub: they are Parquet files in
// storage, but never data.
func (t *icebergTable) deleteFilesWithin(sub string) int {
	n := 0
	for _, d := range append(append([]icebergFile(nil), t.posDel...), t.eqDel...) {
		if l, err := t.resolve(d.df.FilePath); err == nil && within(relTo(t.root, l), sub) {
			n++
		}
	}
	return n
}

const osSep = filepath.Separator
