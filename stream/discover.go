package stream

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"net/url"
	"os"
	"path"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"github.com/RoaringBitmap/roaring/v2/roaring64"

	"github.com/kgauge/kgauge/internal/errtext"
)

// KeyValue is one hive-style path segment key=value, such as year=2024.
type KeyValue struct{ Key, Value string }

// File is one data file found by Discover.
type File struct {
	Path      string
	Size      int64
	Format    Format
	Partition []KeyValue // hive segments of the path, outermost first; never features
	// ETag is the object's entity tag as the store reported it (quotes removed), "" for a local
	// file or when unknown. With the key it identifies a remote object (see [ContentID]).
	ETag string

	key    string // the file's identity: device and inode, or the object's key and ETag
	viaSym bool   // the path reached the file through a symbolic link
	// Deleted holds the rows (0-based, in file order) a lake table's deletion vector or position
	// delete files drop; nil when none. Only Parquet files may have them.
	Deleted *roaring64.Bitmap
}

// errNotData is the cause when a file named explicitly is no supported format.
var errNotData = errors.New("not a Parquet or Arrow IPC file (magic bytes)")

// errDamaged is the cause when a file meant as data (by its extension or its first bytes) sniffs
// as no supported format.
var errDamaged = errors.New("not a Parquet or Arrow IPC file (magic bytes): truncated or damaged")

// ErrUnreadableFile is the cause when a data file found in a directory, a glob or named explicitly
// cannot be read: it cannot be opened or stat'ed (permissions, a dangling symbolic link), or it
// starts like a Parquet or Arrow IPC file, or carries such an extension, but is truncated or
// damaged (its magic bytes or footer do not hold). [DiscoverOptions].SkipUnreadable skips such
// files instead.
var ErrUnreadableFile = errors.New("stream: data file cannot be read")

// DiscoverOptions configures [DiscoverWith].
type DiscoverOptions struct {
	// SkipUnreadable lists data files that cannot be read in [Discovery].Skipped instead of
	// failing. A missing path, a directory or glob with no data file and a bad glob stay errors.
	SkipUnreadable bool
	// AsFiles reads a table's folder as plain files (every data file found, removed ones included),
	// as Discover did before it knew tables.
	AsFiles bool
	Table   TableOptions
	// SketchMagic, when set, marks files that start with these bytes as saved sketches: inside
	// directories and globs, and when named, such a file is listed in [Discovery].Sketches
	// (sorted by path) instead of being passed over or refused as not data. Local files only.
	SketchMagic string
}

// Skipped is a data file left out because it cannot be read, with the reason (one line).
type Skipped struct {
	Path   string
	Reason string
	Err    error // the *ReadError that would have been returned
}

// Discovery is what [DiscoverWith] found.
type Discovery struct {
	Files   []File    // sorted by path, each file once
	Skipped []Skipped // sorted by path; empty unless SkipUnreadable
	Tables  []*Table  // the lake tables read through their metadata, in the order named
	// Sketches are the saved sketch files found (see [DiscoverOptions].SketchMagic), sorted by
	// path, each path once.
	Sketches []string
}

// Discover expands files, directories (recursive) and glob patterns into data
// files, sorted by path and deduplicated. It is DiscoverWith with default options.
func Discover(patterns []string) ([]File, error) {
	d, err := DiscoverWith(patterns, DiscoverOptions{})
	if err != nil {
		return nil, err
	}
	return d.Files, nil
}

// DiscoverWith expands files, directories (recursive) and glob patterns into data
// files, sorted by path and deduplicated by identity: a file reached by two names
// (twice named, or through a symbolic link) is taken once, under the name that is not
// a link (the first by path among equals); a remote object once per key and ETag.
//
// A pattern containing *, ? or [ is a glob, unless a file or directory of that
// very name exists (a partition value may hold such characters): its segments are matched with
// path.Match, and a segment "**" matches any number of directories (zero
// included). A directory matched by a glob is taken whole, like a directory
// named explicitly. While walking or globbing, names starting with "_" or "."
// are skipped (the roots named by the caller are not), and an entry, symbolic
// links included, that the glob cannot match is never opened. The format is
// sniffed from magic bytes, not from the extension: a file that sniffs as no
// format and neither starts like one nor has a data extension (.parquet, .pq,
// .arrow, .arrows, .feather, .ipc) is not data and is passed over inside
// directories and globs, and is an error naming it when named explicitly. A
// data file that cannot be read is an error wrapping [ErrUnreadableFile], or
// with SkipUnreadable is listed in Skipped. A missing path is an error naming
// it; a directory or glob with no data files is an error naming it that wraps
// ErrNoDataFiles. All errors are *ReadError.
//
// A path (not a glob) that is a Delta Lake or Apache Iceberg table, or a folder inside one, yields
// the table's live data files (see [Tables]) unless opt.AsFiles is set; the tables read are in
// Discovery.Tables, in the order named. opt.Table.Where prunes files by partition, tables and hive
// folders alike.
func DiscoverWith(patterns []string, opt DiscoverOptions) (*Discovery, error) {
	d := discoverer{opt: opt}
	for _, p := range patterns {
		before := d.found
		isTable, err := d.table(p)
		switch {
		case err != nil:
			return nil, err
		case isTable:
			continue
		case isRemote(p):
			err = d.remote(p)
		case strings.ContainsAny(p, "*?[") && !exists(p):
			err = d.glob(p)
		default:
			err = d.path(p)
		}
		if err != nil {
			return nil, err
		}
		if d.found == before {
			return nil, newError(p, "", ErrNoDataFiles)
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
	if len(d.files) == 0 && len(d.skipped) == 0 && len(d.sketches) == 0 {
		return nil, newError(strings.Join(patterns, " "), "", noLive(opt.Table.Where))
	}
	sort.Strings(d.sketches)
	return &Discovery{Files: dedupe(d.files), Skipped: dedupeSkipped(d.skipped), Tables: d.tables,
		Sketches: slices.Compact(d.sketches)}, nil
}

// dedupe sorts files by path and keeps one file per identity: the first whose path is not a
// symbolic link, or else the first by path.
func dedupe(files []File) []File {
	sort.SliceStable(files, func(i, j int) bool { return files[i].Path < files[j].Path })
	best := make(map[string]int, len(files))
	for i, f := range files {
		j, ok := best[f.key]
		if !ok || (files[j].viaSym && !f.viaSym) {
			best[f.key] = i
		}
	}
	out := make([]File, 0, len(best))
	for i, f := range files {
		if best[f.key] == i {
			out = append(out, f)
		}
	}
	return out
}

func dedupeSkipped(s []Skipped) []Skipped {
	sort.SliceStable(s, func(i, j int) bool { return s[i].Path < s[j].Path })
	out := s[:0]
	for i, x := range s {
		if i == 0 || x.Path != s[i-1].Path {
			out = append(out, x)
		}
	}
	return out
}

type discoverer struct {
	opt      DiscoverOptions
	tables   []*Table
	files    []File
	skipped  []Skipped
	sketches []string
	found    int // files matched so far, duplicates, skipped files and sketches included
}

// unreadable handles a data file that cannot be read: an error, or with SkipUnreadable an entry
// in Skipped.
func (d *discoverer) unreadable(p string, cause error) error {
	d.found++
	err := newError(p, "", fmt.Errorf("%w: %v", ErrUnreadableFile, pathCause(cause)))
	if !d.opt.SkipUnreadable {
		return err
	}
	d.skipped = append(d.skipped, Skipped{Path: filepath.Clean(p), Reason: oneLine(pathCause(cause).Error()), Err: err})
	return nil
}

// exists reports whether a file or directory (or a link) named p exists.
func exists(p string) bool {
	_, err := os.Lstat(p)
	return err == nil
}

// oneLine is a skipped file's reason: the message on one line, in the user's terms.
func oneLine(s string) string { return errtext.Line(s) }

// dataExtensions are the file name extensions of the supported formats.
var dataExtensions = []string{".parquet", ".pq", ".arrow", ".arrows", ".feather", ".ipc"}

// looksLikeData reports whether a file that sniffs as no format is still meant as data: it has
// a data extension, or it starts like a supported format (Parquet's or Arrow's magic, or an
// Arrow stream's continuation marker).
func looksLikeData(p string) bool {
	ext := strings.ToLower(filepath.Ext(p))
	for _, e := range dataExtensions {
		if ext == e {
			return true
		}
	}
	if isRemote(p) {
		return false
	}
	f, err := os.Open(p)
	if err != nil {
		return true
	}
	defer f.Close()
	var head [8]byte
	n, _ := io.ReadFull(f, head[:])
	h := head[:n]
	return bytes.HasPrefix(h, []byte("PAR1")) || bytes.HasPrefix(h, []byte("ARROW1")) ||
		bytes.HasPrefix(h, []byte{0xFF, 0xFF, 0xFF, 0xFF})
}

// hasMagic reports whether the local file p starts with magic.
func hasMagic(p, magic string) bool {
	f, err := os.Open(p)
	if err != nil {
		return false
	}
	defer f.Close()
	head := make([]byte, len(magic))
	_, err = io.ReadFull(f, head)
	return err == nil && string(head) == magic
}

// take sniffs the regular file p (size bytes, identity key) and adds it when it is data.
// explicit says the caller named it.
func (d *discoverer) take(p string, size int64, key string, viaSym, explicit bool) error {
	f, err := sniff(p, size)
	if err != nil {
		return d.unreadable(p, err)
	}
	if f == 0 {
		if d.opt.SketchMagic != "" && hasMagic(p, d.opt.SketchMagic) {
			d.found++
			d.sketches = append(d.sketches, filepath.Clean(p))
			return nil
		}
		if looksLikeData(p) {
			return d.unreadable(p, errDamaged)
		}
		if explicit {
			return newError(p, "", errNotData)
		}
		return nil
	}
	d.add(p, size, f, key, viaSym)
	return nil
}

// path handles a pattern without glob characters.
func (d *discoverer) path(p string) error {
	fi, err := os.Stat(p)
	if err != nil {
		if lfi, lerr := os.Lstat(p); lerr == nil && lfi.Mode()&fs.ModeSymlink != 0 {
			return d.unreadable(p, err) // a dangling link, or one we may not follow
		}
		return newError(p, "", pathCause(err))
	}
	if fi.IsDir() {
		return d.walk(p)
	}
	lfi, err := os.Lstat(p)
	viaSym := err == nil && lfi.Mode()&fs.ModeSymlink != 0
	return d.take(p, fi.Size(), fileKey(p, fi), viaSym, true)
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
			if p != root && e != nil && e.IsDir() {
				// A directory below root that cannot be listed may hide data files.
				if uerr := d.unreadable(p, err); uerr != nil {
					return uerr
				}
				return filepath.SkipDir
			}
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
		var (
			size int64
			fi   fs.FileInfo
		)
		if !isDir {
			viaSym := e.Type()&fs.ModeSymlink != 0
			// A symbolic link the glob cannot match, as a file or as a directory to walk, is never
			// opened or followed.
			if viaSym && pat != nil && !matchSegments(pat, segs) && !matchPrefix(pat, segs) {
				return nil
			}
			fi, err = os.Stat(p) // follows symbolic links
			if err != nil {
				if pat != nil && !matchSegments(pat, segs) {
					return nil
				}
				return d.unreadable(p, err)
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
			if pat != nil && !matchSegments(pat, segs) {
				return nil
			}
			return d.take(p, size, fileKey(p, fi), viaSym, false)
		}
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
	})
	if err != nil {
		var re *ReadError
		if errors.As(err, &re) {
			return re
		}
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

func (d *discoverer) add(p string, size int64, f Format, key string, viaSym bool) {
	d.found++
	p = filepath.Clean(p)
	d.files = append(d.files, File{Path: p, Size: size, Format: f, Partition: hivePartition(p), key: key, viaSym: viaSym})
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
