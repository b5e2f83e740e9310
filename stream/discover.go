package stream

import (
	"errors"
	"fmt"
	"io/fs"
	"net/url"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strings"

	"github.com/RoaringBitmap/roaring/v2/roaring64"
)

// KeyValue is one hive-style path segment key=value, such as year=2024.
type KeyValue struct{ Key, Value string }

// File is one data file found by Discover.
type File struct {
	Path      string
	Size      int64
	Format    Format
	Partition []KeyValue // hive segments of the path, outermost first; never features
	// Deleted holds the rows (0-based, in file order) a lake table's deletion vector or position
	// delete files drop; nil when none. Only Parquet files may have them.
	Deleted *roaring64.Bitmap
}

// errNotData is the cause when a file named explicitly is no supported format.
var errNotData = errors.New("not a Parquet or Arrow IPC file (magic bytes)")

// Discover expands files, directories (recursive) and glob patterns into data
// files, sorted by path and deduplicated.
//
// A pattern containing *, ? or [ is a glob: its segments are matched with
// path.Match, and a segment "**" matches any number of directories (zero
// included). A directory matched by a glob is taken whole, like a directory
// named explicitly. While walking or globbing, names starting with "_" or "."
// are skipped (the roots named by the caller are not). The format is sniffed
// from magic bytes, not from the extension: inside directories and globs only
// files that sniff as a supported format are taken, while a file named
// explicitly that sniffs as nothing is an error naming it. A missing path is
// an error naming it; a directory or glob with no data files is an error
// naming it that wraps ErrNoDataFiles. All errors are *ReadError.
func Discover(patterns []string) ([]File, error) {
	files, _, err := DiscoverWith(patterns, DiscoverOptions{})
	return files, err
}

// DiscoverWith is Discover that also reads lake tables: a path (not a glob) that is a Delta Lake
// or Apache Iceberg table, or a folder inside one, yields the table's live data files (see Tables)
// unless opt.AsFiles is set. opt.Table.Where prunes files by partition, tables and hive folders
// alike. It returns the tables read, in the order named.
func DiscoverWith(patterns []string, opt DiscoverOptions) ([]File, []*Table, error) {
	d := discoverer{seen: make(map[string]bool), opt: opt}
	for _, p := range patterns {
		before := d.found
		isTable, err := d.table(p)
		switch {
		case err != nil:
			return nil, nil, err
		case isTable:
			continue
		case isRemote(p):
			err = d.remote(p)
		case strings.ContainsAny(p, "*?["):
			err = d.glob(p)
		default:
			err = d.path(p)
		}
		if err != nil {
			return nil, nil, err
		}
		if d.found == before {
			return nil, nil, newError(p, "", ErrNoDataFiles)
		}
	}
	if w := opt.Table.Where; len(w) > 0 {
		kept := d.files[:0]
		for _, f := range d.files {
			if MatchWhere(f.Partition, w) {
				kept = append(kept, f)
			}
		}
		d.files = kept
	}
	if len(d.files) == 0 {
		return nil, nil, newError(strings.Join(patterns, " "), "", noLive(opt.Table.Where))
	}
	sort.Slice(d.files, func(i, j int) bool { return d.files[i].Path < d.files[j].Path })
	return d.files, d.tables, nil
}

type discoverer struct {
	opt    DiscoverOptions
	tables []*Table
	files  []File
	seen   map[string]bool // absolute paths already taken
	found  int             // files matched so far, duplicates included
}

// path handles a pattern without glob characters.
func (d *discoverer) path(p string) error {
	fi, err := os.Stat(p)
	if err != nil {
		return newError(p, "", pathCause(err))
	}
	if fi.IsDir() {
		return d.walk(p)
	}
	f, err := sniff(p, fi.Size())
	if err != nil {
		return newError(p, "", pathCause(err))
	}
	if f == 0 {
		return newError(p, "", errNotData)
	}
	d.add(p, fi.Size(), f)
	return nil
}

// walk takes every data file below the directory root.
func (d *discoverer) walk(root string) error {
	return d.walkMatch(root, nil)
}

// walkMatch walks root. With pat nil every data file is taken; otherwise a
// file is taken when its path relative to root matches the segments pat, and
// a directory that matches is taken whole.
func (d *discoverer) walkMatch(root string, pat []string) error {
	err := filepath.WalkDir(root, func(p string, e fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if p == root {
			if !e.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		name := e.Name()
		if strings.HasPrefix(name, "_") || strings.HasPrefix(name, ".") {
			if e.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		var segs []string
		if pat != nil {
			rel, err := filepath.Rel(root, p)
			if err != nil {
				return err
			}
			segs = strings.Split(filepath.ToSlash(rel), "/")
		}
		isDir := e.IsDir()
		var size int64
		if !isDir {
			fi, err := os.Stat(p) // follows symbolic links
			if err != nil {
				return err
			}
			if fi.IsDir() {
				isDir = true // a symbolic link to a directory: take it only when matched
				if pat == nil || !matchSegments(pat, segs) {
					return nil
				}
				return d.walkMatch(p, nil)
			}
			if !fi.Mode().IsRegular() {
				return nil
			}
			size = fi.Size()
		}
		if isDir {
			if pat == nil {
				return nil
			}
			if matchSegments(pat, segs) {
				if err := d.walkMatch(p, nil); err != nil {
					return err
				}
				return filepath.SkipDir
			}
			if !matchPrefix(pat, segs) {
				return filepath.SkipDir
			}
			return nil
		}
		if pat != nil && !matchSegments(pat, segs) {
			return nil
		}
		f, err := sniff(p, size)
		if err != nil {
			return err
		}
		if f != 0 {
			d.add(p, size, f)
		}
		return nil
	})
	if err != nil {
		var pe *fs.PathError
		if errors.As(err, &pe) {
			return newError(pe.Path, "", pe.Err)
		}
		return newError(root, "", err)
	}
	return nil
}

// glob expands a pattern with glob characters, "**" included.
func (d *discoverer) glob(pattern string) error {
	p := filepath.ToSlash(pattern)
	abs := strings.HasPrefix(p, "/")
	segs := strings.Split(strings.Trim(p, "/"), "/")
	var clean []string
	for _, s := range segs {
		if s == "" || s == "." {
			continue
		}
		if s != "**" {
			if _, err := path.Match(s, ""); err != nil {
				return newError(pattern, "", fmt.Errorf("bad glob pattern: %w", err))
			}
		}
		clean = append(clean, s)
	}
	i := 0
	for i < len(clean) && !strings.ContainsAny(clean[i], "*?[") {
		i++
	}
	root := strings.Join(clean[:i], "/")
	switch {
	case abs:
		root = "/" + root
	case root == "":
		root = "."
	}
	root = filepath.FromSlash(root)
	fi, err := os.Stat(root)
	if err != nil || !fi.IsDir() {
		return nil // nothing matches; Discover reports ErrNoDataFiles
	}
	return d.walkMatch(root, clean[i:])
}

// matchSegments reports whether the path segments segs match the pattern
// segments pat, where "**" matches zero or more segments.
func matchSegments(pat, segs []string) bool {
	for len(pat) > 0 {
		if pat[0] == "**" {
			for len(pat) > 0 && pat[0] == "**" {
				pat = pat[1:]
			}
			if len(pat) == 0 {
				return true
			}
			for k := 0; k <= len(segs); k++ {
				if matchSegments(pat, segs[k:]) {
					return true
				}
			}
			return false
		}
		if len(segs) == 0 {
			return false
		}
		if ok, _ := path.Match(pat[0], segs[0]); !ok {
			return false
		}
		pat, segs = pat[1:], segs[1:]
	}
	return len(segs) == 0
}

// matchPrefix reports whether some path starting with the directory segments
// segs could match pat, so that walking below it is worthwhile.
func matchPrefix(pat, segs []string) bool {
	if len(segs) == 0 {
		return true
	}
	if len(pat) == 0 {
		return false
	}
	if pat[0] == "**" {
		return true
	}
	if ok, _ := path.Match(pat[0], segs[0]); !ok {
		return false
	}
	return matchPrefix(pat[1:], segs[1:])
}

func (d *discoverer) add(p string, size int64, f Format) {
	d.found++
	p = filepath.Clean(p)
	key, err := filepath.Abs(p)
	if err != nil {
		key = p
	}
	if d.seen[key] {
		return
	}
	d.seen[key] = true
	d.files = append(d.files, File{Path: p, Size: size, Format: f, Partition: hivePartition(p)})
}

// hivePartition returns the key=value directory segments of p, outermost
// first. Values are percent-unescaped when they are valid escapes.
func hivePartition(p string) []KeyValue {
	var kv []KeyValue
	for _, s := range strings.Split(filepath.ToSlash(filepath.Dir(p)), "/") {
		k, v, ok := strings.Cut(s, "=")
		if !ok || k == "" {
			continue
		}
		if u, err := url.PathUnescape(v); err == nil {
			v = u
		}
		if u, err := url.PathUnescape(k); err == nil {
			k = u
		}
		kv = append(kv, KeyValue{Key: k, Value: v})
	}
	return kv
}

// pathCause strips the path from an *fs.PathError, since *ReadError names it.
func pathCause(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}
