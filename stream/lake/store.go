// Package lake reads lake tables for package stream: a Delta Lake table (a folder holding
// _delta_log/) or an Apache Iceberg table (a folder whose metadata/ holds table metadata), named by
// its root or by a folder inside it, local or on object storage. It returns the table's live data
// files with the partition values its log or manifests give them and the rows its deletion vectors
// or position delete files drop, and refuses, naming the feature, any table it cannot read exactly.
//
// Importing the package sets stream.Tables (the root package kgauge imports it).
package lake

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"net/url"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strings"

	"github.com/kgauge/kgauge/stream"
	"github.com/kgauge/kgauge/stream/objstore"
)

func init() { stream.Tables = Reader{} }

// maxMetaBytes bounds one log, metadata or manifest file read whole into memory.
const maxMetaBytes = 512 << 20

// loc is a folder or file of a table: a local path or an object URL without its query.
type loc struct {
	remote bool
	p      string // local path (OS form) or canonical URL scheme://bucket/key
}

func (l loc) join(elem ...string) loc {
	if l.remote {
		return loc{true, strings.TrimSuffix(l.p, "/") + "/" + strings.Join(elem, "/")}
	}
	return loc{false, filepath.Join(append([]string{l.p}, elem...)...)}
}

// parent returns the folder above l, and false at the top (file system root or bucket).
func (l loc) parent() (loc, bool) {
	if l.remote {
		u, err := objstore.Parse(l.p)
		if err != nil || strings.Trim(u.Key, "/") == "" {
			return l, false
		}
		k := path.Dir(strings.Trim(u.Key, "/"))
		if k == "." {
			k = ""
		}
		u.Key = k
		return loc{true, u.Path()}, true
	}
	abs, err := filepath.Abs(l.p)
	if err != nil || filepath.Dir(abs) == abs {
		return l, false
	}
	return loc{false, filepath.Clean(filepath.Join(l.p, ".."))}, true
}

func (l loc) String() string { return l.p }

// open opens a file for ranged reads.
func (l loc) open() (stream.Handle, error) {
	if l.remote {
		return stream.Remote.Open(l.p)
	}
	f, err := os.Open(l.p)
	if err != nil {
		return nil, err
	}
	return f, nil
}

// readAll reads a whole (metadata) file.
func (l loc) readAll() ([]byte, error) {
	h, err := l.open()
	if err != nil {
		return nil, err
	}
	defer h.Close()
	fi, err := h.Stat()
	if err != nil {
		return nil, err
	}
	if fi.Size() > maxMetaBytes {
		return nil, fmt.Errorf("%s: %d bytes, more than the %d a metadata file may have", l, fi.Size(), maxMetaBytes)
	}
	return io.ReadAll(io.LimitReader(h, maxMetaBytes))
}

// exists reports whether the file l exists; other errors than "not found" are returned.
func (l loc) exists() (bool, error) {
	h, err := l.open()
	if err == nil {
		h.Close()
		return true, nil
	}
	if errors.Is(err, fs.ErrNotExist) {
		return false, nil
	}
	return false, err
}

// entry is one file found by list: its path relative to the listed folder (slash-separated) and size.
type entry struct {
	rel  string
	size int64
}

// list returns the files below the folder l, recursively, sorted. Names starting with "_" or "."
// below the folder are skipped, as stream.Discover skips them. A missing folder lists nothing.
func (l loc) list() ([]entry, error) {
	var out []entry
	if l.remote {
		objs, err := stream.Remote.List(strings.TrimSuffix(l.p, "/") + "/")
		if err != nil {
			if errors.Is(err, fs.ErrNotExist) {
				return nil, nil
			}
			return nil, err
		}
		for _, o := range objs {
			out = append(out, entry{strings.TrimPrefix(o.Path, strings.TrimSuffix(l.p, "/")+"/"), o.Size})
		}
		return out, nil
	}
	err := filepath.WalkDir(l.p, func(p string, e fs.DirEntry, err error) error {
		if err != nil {
			if p == l.p && errors.Is(err, fs.ErrNotExist) {
				return filepath.SkipAll
			}
			return err
		}
		if p == l.p {
			return nil
		}
		if n := e.Name(); strings.HasPrefix(n, "_") || strings.HasPrefix(n, ".") {
			if e.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if e.IsDir() {
			return nil
		}
		fi, err := os.Stat(p)
		if err != nil {
			return err
		}
		if !fi.Mode().IsRegular() {
			return nil
		}
		rel, err := filepath.Rel(l.p, p)
		if err != nil {
			return err
		}
		out = append(out, entry{filepath.ToSlash(rel), fi.Size()})
		return nil
	})
	sort.Slice(out, func(i, j int) bool { return out[i].rel < out[j].rel })
	return out, err
}

// listDir returns the names of the files directly in folder l (locally hidden ones included; on
// object storage listings skip them, so hidden files are opened by name). A missing folder lists
// nothing.
func (l loc) listDir() ([]entry, error) {
	if l.remote {
		all, err := l.list()
		if err != nil {
			return nil, err
		}
		var out []entry
		for _, e := range all {
			if !strings.Contains(e.rel, "/") {
				out = append(out, e)
			}
		}
		return out, nil
	}
	des, err := os.ReadDir(l.p)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, nil
		}
		return nil, err
	}
	var out []entry
	for _, de := range des {
		if de.IsDir() {
			continue
		}
		fi, err := de.Info()
		if err != nil {
			return nil, err
		}
		out = append(out, entry{de.Name(), fi.Size()})
	}
	return out, nil
}

// within reports whether file (slash form relative to the table root) lies below sub ("" for the
// root itself).
func within(file, sub string) bool {
	return sub == "" || strings.HasPrefix(file, sub+"/")
}

// resolveFile turns a path written in a table's metadata into a location: a relative path is
// joined to root; an absolute URL or file path is taken as it is (file: URLs become local paths).
// When the metadata's own idea of the table location (from, may be "") prefixes it, the path is
// rebased onto root, so that a table copied or mounted elsewhere still reads its own files.
func resolveFile(root loc, p, from string) (loc, error) {
	if from != "" {
		f := strings.TrimSuffix(from, "/") + "/"
		if strings.HasPrefix(p, f) {
			return root.join(strings.Split(strings.TrimPrefix(p, f), "/")...), nil
		}
	}
	switch {
	case strings.HasPrefix(p, "file:"):
		u, err := url.Parse(p)
		if err != nil {
			return loc{}, fmt.Errorf("bad file URL %q: %w", p, err)
		}
		return loc{false, filepath.FromSlash(u.Path)}, nil
	case objstore.IsURL(p):
		u, err := objstore.Parse(p)
		if err != nil {
			return loc{}, err
		}
		return loc{true, u.Path()}, nil
	case strings.HasPrefix(p, "/"):
		return loc{root.remote, p}, nil
	}
	return root.join(strings.Split(p, "/")...), nil
}
