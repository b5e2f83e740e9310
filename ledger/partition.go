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
}

// Partitions finds the partitions below root, sorted by key. Data files that are not directly in
// a partition directory (in root itself, or below a segment that is not KEY=VALUE) are returned
// as outside, sorted. Discovery follows [stream.Discover]: names starting with "_" or "." are
// skipped and data files are recognised by their magic bytes.
func Partitions(root string) (parts []Partition, outside []string, err error) {
	files, err := stream.Discover([]string{root})
	if err != nil {
		return nil, nil, fmt.Errorf("ledger: %w", err)
	}
	for _, f := range files {
		// A partition is profiled by its file paths, which would lose a lake table's row deletes.
		if f.Deleted != nil {
			return nil, nil, fmt.Errorf("ledger: %s: a lake table whose deletion vectors or delete files drop rows (%s); track does not apply row deletes yet", root, f.Path)
		}
	}
	byDir := map[string]*Partition{}
	for _, f := range files {
		dir := filepath.Dir(f.Path)
		p, ok := byDir[dir]
		if !ok {
			rel, err := filepath.Rel(root, dir)
			if err != nil {
				return nil, nil, fmt.Errorf("ledger: %w", err)
			}
			vals, isHive := parseHive(filepath.ToSlash(rel))
			if !isHive {
				outside = append(outside, f.Path)
				continue
			}
			p = &Partition{Key: filepath.ToSlash(rel), Values: vals, Dir: dir}
			byDir[dir] = p
		}
		p.Files = append(p.Files, f.Path)
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
