package lake

import (
	"errors"
	"fmt"
	"os"
	"path"
	"path/filepath"
	"strings"

	"github.com/kgauge/kgauge/stream"
	"github.com/kgauge/kgauge/stream/objstore"
)

// Reader is the stream.TableReader of this package.
type Reader struct{}

var _ stream.TableReader = Reader{}

// Resolve returns the table whose root is p or a folder above p, or nil when there is none. A file
// (not a folder) is never a table. For a folder inside the table only the live files below it are
// returned. Errors are *stream.ReadError naming p.
func (Reader) Resolve(p string, opt stream.TableOptions) (*stream.Table, error) {
	named, ok, err := folder(p)
	if err != nil || !ok {
		return nil, err
	}
	root, format, sub, err := findRoot(named)
	if err != nil {
		return nil, &stream.ReadError{File: p, Unit: -1, Row: -1, Err: err}
	}
	if format == "" {
		return nil, nil
	}
	t := &stream.Table{Format: format, Root: root.p, Path: named.p}
	deleteFiles := 0
	switch format {
	case "delta":
		if opt.Snapshot != 0 {
			return nil, &stream.ReadError{File: p, Unit: -1, Row: -1, Err: errors.New("--snapshot is for Iceberg tables; this is a Delta table (use --table-version)")}
		}
		dt, err := readDelta(root, opt.Version)
		if err == nil {
			t.Version = dt.version
			t.Files, t.DeletedRows, err = dt.files(sub, opt.Where)
		}
		if err != nil {
			return nil, &stream.ReadError{File: root.p, Unit: -1, Row: -1, Err: err}
		}
	case "iceberg":
		if opt.Version != nil {
			return nil, &stream.ReadError{File: p, Unit: -1, Row: -1, Err: errors.New("--table-version is for Delta tables; this is an Iceberg table (use --snapshot)")}
		}
		it, err := readIceberg(root, opt.Snapshot)
		if err == nil {
			t.Version = it.snapshot
			deleteFiles = it.deleteFilesWithin(sub)
			t.Files, t.DeletedRows, err = it.files(sub, opt.Where)
		}
		if err != nil {
			return nil, &stream.ReadError{File: root.p, Unit: -1, Row: -1, Err: err}
		}
	}
	t.Live = len(t.Files)
	present, err := countPresent(named, format)
	if err != nil {
		return nil, &stream.ReadError{File: p, Unit: -1, Row: -1, Err: err}
	}
	t.Present = present - deleteFiles

	return t, nil
}

// folder returns p as a location when it names a folder (locally) or a prefix (object storage).
func folder(p string) (loc, bool, error) {
	if objstore.IsURL(p) {
		if stream.Remote == nil || !stream.Remote.IsRemote(p) {
			return loc{}, false, nil
		}
		u, err := objstore.Parse(p)
		if err != nil {
			return loc{}, false, nil
		}
		if strings.ContainsAny(u.Key, "*?[") {
			return loc{}, false, nil
		}
		// Listing the URL as given registers its bucket settings (endpoint, region) for the
		// canonical URLs used from here on.
		objs, err := stream.Remote.List(p)
		if err != nil || len(objs) == 1 && objs[0].Explicit {
			return loc{}, false, nil // a missing prefix or one object: stream reports it
		}
		u.Key = strings.Trim(u.Key, "/")
		return loc{true, u.Path()}, true, nil
	}
	if strings.ContainsAny(p, "*?[") {
		return loc{}, false, nil
	}
	fi, err := os.Stat(p)
	if err != nil || !fi.IsDir() {
		return loc{}, false, nil // stream reports a missing path
	}
	return loc{false, filepath.Clean(p)}, true, nil
}

// findRoot walks up from the named folder to the table root. sub is the named folder relative to
// the root (slash-separated, "" at the root); format is "" when no table holds the folder.
func findRoot(named loc) (root loc, format, sub string, err error) {
	var up []string
	l := named
	for {
		if f, err := tableAt(l); err != nil || f != "" {
			if err != nil {
				return loc{}, "", "", err
			}
			for i, j := 0, len(up)-1; i < j; i, j = i+1, j-1 {
				up[i], up[j] = up[j], up[i]
			}
			return l, f, strings.Join(up, "/"), nil
		}
		parent, ok := l.parent()
		if !ok {
			return loc{}, "", "", nil
		}
		if l.remote {
			up = append(up, path.Base(l.p))
		} else {
			abs, err := filepath.Abs(l.p)
			if err != nil {
				return loc{}, "", "", nil
			}
			up = append(up, filepath.Base(abs))
		}
		l = parent
	}
}

// tableAt returns "delta" when l holds _delta_log/ with a commit or checkpoint, "iceberg" when
// l/metadata holds table metadata, else "".
func tableAt(l loc) (string, error) {
	names, err := l.join("_delta_log").listDir()
	if err != nil {
		return "", err
	}
	for _, e := range names {
		if deltaCommitRe.MatchString(e.rel) || deltaCkptRe.MatchString(e.rel) {
			return "delta", nil
		}
	}
	if len(names) > 0 {
		return "", fmt.Errorf("%s/_delta_log holds no Delta commit or checkpoint", l)
	}
	names, err = l.join("metadata").listDir()
	if err != nil {
		return "", err
	}
	for _, e := range names {
		if strings.HasSuffix(e.rel, ".metadata.json") || e.rel == "version-hint.text" {
			return "iceberg", nil
		}
	}
	return "", nil
}

// countPresent counts the Parquet data files (by name) stored below the named folder, live or not:
// for Delta every *.parquet outside _delta_log; for Iceberg every *.parquet outside metadata/.
func countPresent(named loc, format string) (int, error) {
	es, err := named.list()
	if err != nil {
		return 0, err
	}
	n := 0
	for _, e := range es {
		if !strings.HasSuffix(e.rel, ".parquet") {
			continue
		}
		if format == "iceberg" && (e.rel == "metadata" || strings.HasPrefix(e.rel, "metadata/") || strings.Contains(e.rel, "/metadata/")) {
			continue
		}
		n++
	}
	return n, nil
}
