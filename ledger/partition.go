package ledger

import (
	"fmt"
	"net/url"
	"path/filepath"
	"sort"
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
}

// Partitions finds the partitions below root, sorted by key (byte order of the KEY=VALUE path, the
// order Track profiles them in). Data files that are not directly in a partition directory (in
// root itself, or below a segment that is not KEY=VALUE) are returned as outside, sorted.
// Discovery follows [stream.DiscoverWith]: names starting with "_" or "." are skipped and data
// files are recognised by their magic bytes; a data file that cannot be read is kept in its
// partition's Skipped (outside, when it is in none), so that one bad file fails its partition,
// not the whole lake. A partition directory whose files all cannot be read is a partition too.
func Partitions(root string) (parts []Partition, outside []string, err error) {
	d, err := stream.DiscoverWith([]string{root}, stream.DiscoverOptions{SkipUnreadable: true})
	if err != nil {
		return nil, nil, fmt.Errorf("ledger: %w", err)
	}
	for _, f := range d.Files {
		// A partition is profiled by its file paths, which would lose a lake table's row deletes.
		if f.Deleted != nil {
			return nil, nil, fmt.Errorf("ledger: %s: a lake table whose deletion vectors or delete files drop rows (%s); track does not apply row deletes yet", root, f.Path)
		}
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
