package lake

import (
	"crypto/sha256"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"net/url"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"
)

// DeltaColumn is a column of a Delta table's schema: its name, its primitive type as the protocol
// spells it ("string", "date", "float", "double", "long", ...) and whether it may be null.
type DeltaColumn struct {
	Name     string
	Type     string
	Nullable bool
}

// DeltaFile is a data file to commit to a Delta table: its path relative to the table's root
// ("/"-separated, not escaped), its partition values and its size in bytes.
type DeltaFile struct {
	Path      string
	Partition map[string]string
	Size      int64
}

// CommitDelta writes the next commit of the Delta table at root, a local folder, and returns its
// version. When root holds no table yet, the commit is version 0 and carries the protocol (reader
// version 1, writer version 2) and the table's metadata (the schema of cols, partitioned by
// partitionBy). It adds files; with overwrite, every live file of a partition one of them belongs
// to is removed in the same commit, so the partition holds only the new files (the removed files
// stay on disk for older versions, as after any Delta overwrite). An existing table must have the
// same partition columns. The commit file is created exclusively, so two writers cannot both
// write one version: the second fails and nothing is changed.
func CommitDelta(root string, cols []DeltaColumn, partitionBy []string, files []DeltaFile, overwrite bool) (int64, error) {
	root = filepath.Clean(root)
	now := time.Now().UnixMilli()
	var actions []map[string]any
	version := int64(0)
	_, err := os.Stat(filepath.Join(root, "_delta_log"))
	switch {
	case errors.Is(err, fs.ErrNotExist):
		fields := make([]map[string]any, len(cols))
		for i, c := range cols {
			fields[i] = map[string]any{"name": c.Name, "type": c.Type, "nullable": c.Nullable, "metadata": map[string]any{}}
		}
		schema, err := json.Marshal(map[string]any{"type": "struct", "fields": fields})
		if err != nil {
			return 0, fmt.Errorf("delta table %s: %w", root, err)
		}
		actions = append(actions,
			map[string]any{"protocol": map[string]any{"minReaderVersion": 1, "minWriterVersion": 2}},
			map[string]any{"metaData": map[string]any{"id": tableID(root, now), "format": map[string]any{"provider": "parquet", "options": map[string]any{}},
				"schemaString": string(schema), "partitionColumns": partitionBy, "configuration": map[string]any{}, "createdTime": now}})
	case err != nil:
		return 0, fmt.Errorf("delta table %s: %w", root, err)
	default:
		t, err := readDelta(loc{false, root}, nil)
		if err != nil {
			return 0, err
		}
		if t.meta == nil || !slices.Equal(t.meta.PartitionColumns, partitionBy) {
			var have []string
			if t.meta != nil {
				have = t.meta.PartitionColumns
			}
			return 0, fmt.Errorf("delta table %s is partitioned by %v, not %v", root, have, partitionBy)
		}
		version = t.version + 1
		if overwrite {
			actions = append(actions, removesFor(t, files, now)...)
		}
	}
	for _, f := range files {
		pv := map[string]any{}
		for _, c := range partitionBy {
			pv[c] = f.Partition[c]
		}
		actions = append(actions, map[string]any{"add": map[string]any{"path": escapePath(f.Path), "partitionValues": pv,
			"size": f.Size, "modificationTime": now, "dataChange": true}})
	}
	op := "WRITE"
	if overwrite && version > 0 {
		op = "OVERWRITE PARTITIONS"
	}
	var buf strings.Builder
	for _, a := range append([]map[string]any{{"commitInfo": map[string]any{"timestamp": now, "operation": op, "engineInfo": "kgauge"}}}, actions...) {
		line, err := json.Marshal(a)
		if err != nil {
			return 0, fmt.Errorf("delta table %s: %w", root, err)
		}
		buf.Write(line)
		buf.WriteByte('\n')
	}
	if err := putIfAbsent(filepath.Join(root, "_delta_log", fmt.Sprintf("%020d.json", version)), []byte(buf.String())); err != nil {
		return 0, fmt.Errorf("delta table %s: version %d: %w", root, version, err)
	}
	return version, nil
}

// removesFor returns remove actions for the live files of t in the partitions of files.
func removesFor(t *deltaTable, files []DeltaFile, now int64) []map[string]any {
	key := func(get func(c string) string) string {
		var parts []string
		for _, c := range t.meta.PartitionColumns {
			parts = append(parts, url.QueryEscape(c)+"="+url.QueryEscape(get(c)))
		}
		return strings.Join(parts, "&")
	}
	over := map[string]bool{}
	for _, f := range files {
		over[key(func(c string) string { return f.Partition[c] })] = true
	}
	var keys []string
	for k := range t.adds {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	var out []map[string]any
	for _, k := range keys {
		a := t.adds[k]
		if !over[key(func(c string) string {
			if v := a.PartitionValues[c]; v != nil {
				return *v
			}
			return ""
		})] {
			continue
		}
		r := map[string]any{"path": a.Path, "deletionTimestamp": now, "dataChange": true, "size": a.Size}
		if a.DeletionVector != nil {
			r["deletionVector"] = a.DeletionVector
		}
		out = append(out, map[string]any{"remove": r})
	}
	return out
}

// escapePath writes a relative path as the protocol's add paths are: a URI path, each segment
// escaped.
func escapePath(p string) string {
	segs := strings.Split(p, "/")
	for i, s := range segs {
		segs[i] = url.PathEscape(s)
	}
	return strings.Join(segs, "/")
}

// tableID is a version-4-style UUID for a new table's metadata, from its path and creation time.
func tableID(root string, now int64) string {
	b := sha256.Sum256(fmt.Appendf(nil, "%s\x00%d", root, now))
	b[6] = b[6]&0x0f | 0x40
	b[8] = b[8]&0x3f | 0x80
	return fmt.Sprintf("%x-%x-%x-%x-%x", b[0:4], b[4:6], b[6:8], b[8:10], b[10:16])
}

// putIfAbsent writes data to path through a temporary file that is linked to path only if path
// does not exist yet (link(2) fails on an existing name), so a reader never sees a partial commit
// and two writers cannot both take one version.
func putIfAbsent(path string, data []byte) error {
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return err
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	if _, err := tmp.Write(data); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Sync(); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	if err := os.Link(tmp.Name(), path); err != nil {
		if errors.Is(err, fs.ErrExist) {
			return fmt.Errorf("another writer committed it first: %w", err)
		}
		return err
	}
	return nil
}
