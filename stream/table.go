package stream

import (
	"errors"
	"fmt"
	"strings"

	"github.com/RoaringBitmap/roaring/v2/roaring64"
)

// TableOptions says which state of a lake table Discover reads.
type TableOptions struct {
	// Version is the Delta Lake table version to read; nil reads the latest.
	Version *int64
	// Snapshot is the Apache Iceberg snapshot id to read; 0 reads the current snapshot.
	Snapshot int64
	// Where keeps only files whose partition has every one of these key=value pairs. For tables the
	// partition comes from the table's log or manifests; for plain folders from hive segments.
	Where []KeyValue
}

// Table is one lake table (or a partition folder of one) that Discover read through its metadata.
type Table struct {
	Format  string // "delta" or "iceberg"
	Root    string // the table's root folder or URL
	Path    string // the path the caller named: Root or a folder inside it
	Version int64  // Delta: the table version read; Iceberg: the snapshot id
	// Live is the number of data files the table's state holds below Path (after Where); Present the
	// number of data files found in storage below Path, live or not.
	Live, Present int
	DeletedRows   int64 // rows of the live files that deletion vectors or delete files drop
	Files         []File
}

// TableReader finds lake tables. Package stream/lake sets Tables to one in its init.
type TableReader interface {
	// Resolve returns the table at path (its root, or a folder inside it), or nil and no error when
	// path is in no table. Errors name the path and, for an unsupported table feature, the feature.
	Resolve(path string, opt TableOptions) (*Table, error)
}

// DiscoverTables is [DiscoverWith] for callers that want only the files and the tables read.
func DiscoverTables(patterns []string, opt DiscoverOptions) ([]File, []*Table, error) {
	d, err := DiscoverWith(patterns, opt)
	if err != nil {
		return nil, nil, err
	}
	return d.Files, d.Tables, nil
}

// Tables resolves table paths in Discover; nil (no table support linked) reads every path as files.
var Tables TableReader

// ErrNoMatch means that no file's partition matched the --where filter.
var ErrNoMatch = errors.New("stream: no data file's partition matches the filter")

// table reads p as a lake table when it is one. It reports whether it did.
func (d *discoverer) table(p string) (bool, error) {
	if Tables == nil || d.opt.AsFiles || strings.ContainsAny(p, "*?[") && !isRemote(p) {
		return false, nil
	}
	t, err := Tables.Resolve(p, d.opt.Table)
	if err != nil || t == nil {
		return false, err
	}
	d.tables = append(d.tables, t)
	for _, f := range t.Files {
		d.found++
		// A table's files are identified by their path (or URL): the log or manifests name each
		// once, and dedupe keeps one file per identity.
		f.key = "table:" + f.Path
		d.files = append(d.files, f)
	}
	if t.Live == 0 {
		return true, newError(p, "", fmt.Errorf("%s table version %d: %w", t.Format, t.Version, noLive(d.opt.Table.Where)))
	}
	return true, nil
}

func noLive(where []KeyValue) error {
	if len(where) > 0 {
		return fmt.Errorf("%w %s", ErrNoMatch, WhereString(where))
	}
	return ErrNoDataFiles
}

// WhereString formats a filter as "day=2026-11-28,region=north".
func WhereString(where []KeyValue) string {
	parts := make([]string, len(where))
	for i, kv := range where {
		parts[i] = kv.Key + "=" + kv.Value
	}
	return strings.Join(parts, ",")
}

// MatchWhere reports whether a partition holds every key=value pair of where.
func MatchWhere(part []KeyValue, where []KeyValue) bool {
	for _, w := range where {
		ok := false
		for _, kv := range part {
			if kv.Key == w.Key && kv.Value == w.Value {
				ok = true
				break
			}
		}
		if !ok {
			return false
		}
	}
	return true
}

// ParseWhere parses "key=value" filters; a key may be given several times only with one value.
func ParseWhere(specs []string) ([]KeyValue, error) {
	var out []KeyValue
	for _, s := range specs {
		k, v, ok := strings.Cut(s, "=")
		if !ok || k == "" {
			return nil, fmt.Errorf("filter %q: want KEY=VALUE, such as day=2026-11-28", s)
		}
		for _, o := range out {
			if o.Key == k && o.Value != v {
				return nil, fmt.Errorf("filter %q: key %q already set to %q", s, k, o.Value)
			}
		}
		out = append(out, KeyValue{Key: k, Value: v})
	}
	return out, nil
}

// deletedIn returns how many rows of [lo, hi) the bitmap holds.
func deletedIn(b *roaring64.Bitmap, lo, hi int64) int64 {
	if b == nil || hi <= lo {
		return 0
	}
	n := b.Rank(uint64(hi - 1))
	if lo > 0 {
		n -= b.Rank(uint64(lo - 1))
	}
	return int64(n)
}

// rowDeletes marks the deleted rows of one unit as its rows are read.
type rowDeletes struct {
	it   roaring64.IntPeekable64
	next int64 // the next deleted row at or after the reading position, or -1
}

func newRowDeletes(b *roaring64.Bitmap, from int64) *rowDeletes {
	if b == nil || b.IsEmpty() {
		return nil
	}
	it := b.Iterator()
	it.AdvanceIfNeeded(uint64(from))
	rd := &rowDeletes{it: it, next: -1}
	if it.HasNext() {
		rd.next = int64(it.PeekNext())
	}
	return rd
}

// mark sets bad[i] = 1 for the deleted rows among the m rows starting at file row start, calls
// fn(i) for each and returns their number.
func (rd *rowDeletes) mark(start int64, bad []uint8, fn func(i int)) int {
	if rd == nil {
		return 0
	}
	n := 0
	end := start + int64(len(bad))
	for rd.next >= 0 && rd.next < end {
		if rd.next >= start {
			i := int(rd.next - start)
			fn(i)
			bad[i] = 1
			n++
		}
		rd.it.Next()
		rd.next = -1
		if rd.it.HasNext() {
			rd.next = int64(rd.it.PeekNext())
		}
	}
	return n
}
