package ledger

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"net/url"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/kgauge/kgauge/stream"
)

// Partition is one hive-style partition of a lake: a directory whose path below the root is made
// only of KEY=VALUE segments and that directly holds data files.
type Partition struct {
	Key    string     // the segments joined by "/", e.g. "region=north/day=2026-11-28"
	Values []KeyValue // the segments parsed, outermost first (values %-unescaped)
	Dir    string
	Files  []string // the data files directly in Dir, sorted
	// Skipped are the data files directly in Dir that cannot be read, sorted.
	Skipped []stream.Skipped
	// Table is set when the partition is one of a Delta Lake or Apache Iceberg table's: its Values
	// come from the table's log or manifests, Files are its live files in that table state (in any
	// folders) and Dir is the table folder named. Nil for a hive folder.
	Table *TableState
	// DeletedRows maps a file of Files to the rows its deletion vector or delete files drop (tables
	// only; files without deletes are absent).
	DeletedRows map[string]int64
}

// TableState is the state of a lake table a partition was profiled at.
type TableState struct {
	Format   string `json:"format"`             // "delta" or "iceberg"
	Version  *int64 `json:"version,omitempty"`  // Delta: the table version
	Snapshot *int64 `json:"snapshot,omitempty"` // Iceberg: the snapshot id
	// DeletedRows are the rows of the partition's live files that its deletes drop.
	DeletedRows int64 `json:"deleted_rows"`
	// State is "sha256:" and the SHA-256 of the partition's live files (path relative to the root,
	// size) and of their row deletes: equal states hold the same rows.
	State string `json:"state"`
}

// UnpartitionedKey is the partition key of a lake table without partition columns: the whole table
// is one partition.
const UnpartitionedKey = "table"

// Partitions finds the partitions below root, sorted by key (byte order of the KEY=VALUE path, the
// order Track profiles them in). Data files that are not directly in a partition directory (in
// root itself, or below a segment that is not KEY=VALUE) are returned as outside, sorted.
// Discovery follows [stream.DiscoverWith]: names starting with "_" or "." are skipped and data
// files are recognised by their magic bytes; a data file that cannot be read is kept in its
// partition's Skipped (outside, when it is in none), so that one bad file fails its partition,
// not the whole lake. A partition directory whose files all cannot be read is a partition too.
func Partitions(root string) (parts []Partition, outside []string, err error) {
	return PartitionsWith(root, stream.DiscoverOptions{})
}

// PartitionsWith is [Partitions] with the table options of opt (--table-version, --snapshot,
// --where, --as-files; opt.SkipUnreadable is always set). When root is a Delta Lake or Apache
// Iceberg table, or a folder inside one, the partitions are those of the table's own partition
// values (from its log or manifests, never from folder names) in the table state read, each with
// its live files and a [TableState]; a table without partition columns is one partition,
// [UnpartitionedKey]. Otherwise they are the hive folders below root.
func PartitionsWith(root string, opt stream.DiscoverOptions) (parts []Partition, outside []string, err error) {
	opt.SkipUnreadable = true
	d, err := stream.DiscoverWith([]string{root}, opt)
	if err != nil {
		return nil, nil, fmt.Errorf("ledger: %w", err)
	}
	if len(d.Tables) > 0 {
		return tablePartitions(root, d.Tables[0], d.Files), nil, nil
	}
	byDir := map[string]*Partition{}
	place := func(path string) (*Partition, error) {
		dir := filepath.Dir(path)
		if p, ok := byDir[dir]; ok {
			return p, nil
		}
		rel, err := filepath.Rel(root, dir)
		if err != nil {
			return nil, fmt.Errorf("ledger: %w", err)
		}
		vals, isHive := parseHive(filepath.ToSlash(rel))
		if !isHive {
			return nil, nil
		}
		p := &Partition{Key: filepath.ToSlash(rel), Values: vals, Dir: dir}
		byDir[dir] = p
		return p, nil
	}
	for _, f := range d.Files {
		p, err := place(f.Path)
		if err != nil {
			return nil, nil, err
		}
		if p == nil {
			outside = append(outside, f.Path)
			continue
		}
		p.Files = append(p.Files, f.Path)
	}
	for _, s := range d.Skipped {
		p, err := place(s.Path)
		if err != nil {
			return nil, nil, err
		}
		if p == nil {
			outside = append(outside, s.Path)
			continue
		}
		p.Skipped = append(p.Skipped, s)
	}
	for _, p := range byDir {
		sort.Strings(p.Files)
		parts = append(parts, *p)
	}
	sort.Slice(parts, func(i, j int) bool { return parts[i].Key < parts[j].Key })
	sort.Strings(outside)
	return parts, outside, nil
}

// parseHive splits rel into KEY=VALUE segments; false when rel is "." or a segment is not one.
func parseHive(rel string) ([]KeyValue, bool) {
	if rel == "." || rel == "" {
		return nil, false
	}
	var kv []KeyValue
	for _, seg := range strings.Split(rel, "/") {
		k, v, ok := strings.Cut(seg, "=")
		if !ok || k == "" {
			return nil, false
		}
		if u, err := url.PathUnescape(v); err == nil {
			v = u
		}
		kv = append(kv, KeyValue{Key: k, Value: v})
	}
	return kv, true
}

// tablePartitions groups the live files of table t by their partition values.
func tablePartitions(root string, t *stream.Table, files []stream.File) []Partition {
	byKey := map[string]*Partition{}
	for _, f := range files {
		key := partitionKey(f.Partition)
		p, ok := byKey[key]
		if !ok {
			v := t.Version
			st := &TableState{Format: t.Format, Version: &v}
			if t.Format == "iceberg" {
				st.Version, st.Snapshot = nil, &v
			}
			p = &Partition{Key: key, Values: []KeyValue{}, Dir: root, Table: st,
				DeletedRows: map[string]int64{}}
			for _, kv := range f.Partition {
				p.Values = append(p.Values, KeyValue{Key: kv.Key, Value: kv.Value})
			}
			byKey[key] = p
		}
		p.Files = append(p.Files, f.Path)
		if f.Deleted != nil && !f.Deleted.IsEmpty() {
			n := int64(f.Deleted.GetCardinality())
			p.DeletedRows[f.Path] = n
			p.Table.DeletedRows += n
		}
	}
	byFile := map[string]stream.File{}
	for _, f := range files {
		byFile[f.Path] = f
	}
	var parts []Partition
	for _, p := range byKey {
		sort.Strings(p.Files)
		h := sha256.New()
		for _, path := range p.Files {
			f := byFile[path]
			fmt.Fprintf(h, "%s\x00%d\x00", strconv.Quote(relTo(root, path)), f.Size)
			if f.Deleted != nil {
				// The deleted row numbers themselves: a bitmap's serialized form depends on how
				// it was built.
				var buf [binary.MaxVarintLen64]byte
				for it := f.Deleted.Iterator(); it.HasNext(); {
					h.Write(buf[:binary.PutUvarint(buf[:], it.Next())])
				}
			}
			h.Write([]byte{'\n'})
		}
		p.Table.State = "sha256:" + hex.EncodeToString(h.Sum(nil))
		parts = append(parts, *p)
	}
	sort.Slice(parts, func(i, j int) bool { return parts[i].Key < parts[j].Key })
	return parts
}

// partitionKey joins a table file's partition values as KEY=VALUE segments, with "/", "%" and
// control characters %-escaped in keys and values and "=" in keys, so that the key is a
// relative path of the sketch file and parses back with [parseHive].
func partitionKey(part []stream.KeyValue) string {
	if len(part) == 0 {
		return UnpartitionedKey
	}
	segs := make([]string, len(part))
	for i, kv := range part {
		segs[i] = escapeSegment(kv.Key, true) + "=" + escapeSegment(kv.Value, false)
	}
	return strings.Join(segs, "/")
}

func escapeSegment(s string, key bool) string {
	var b strings.Builder
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c == '/' || c == '%' || c == '\\' || c < 0x20 || c == 0x7f || key && c == '=' || i == 0 && c == '.' {
			fmt.Fprintf(&b, "%%%02X", c)
			continue
		}
		b.WriteByte(c)
	}
	return b.String()
}
