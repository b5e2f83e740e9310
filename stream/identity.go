package stream

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
)

// FileKey returns the identity of the local file at path, following symbolic links: its device
// and inode where the system has them, otherwise its absolute path with links resolved. false
// when the file cannot be stat'ed (it does not exist). Two paths with the same key name one file.
func FileKey(path string) (string, bool) {
	if isRemote(path) {
		return "", false
	}
	fi, err := os.Stat(path)
	if err != nil {
		return "", false
	}
	return fileKey(path, fi), true
}

// pathKey is the identity of a file without device and inode: its absolute path, links resolved.
func pathKey(path string) string {
	p, err := filepath.EvalSymlinks(path)
	if err != nil {
		p = path
	}
	if a, err := filepath.Abs(p); err == nil {
		p = a
	}
	return "path:" + p
}

// Key returns the file's identity as discovery saw it (see [FileKey]; for a remote object its key
// and ETag, or its URL).
func (f File) Key() string {
	if f.key == "" {
		if k, ok := FileKey(f.Path); ok {
			return k
		}
		return "url:" + f.Path
	}
	return f.key
}

// fingerprintBytes is how much of each end of a local file [ContentID] hashes.
const (
	fingerprintHead = 4 << 10
	fingerprintTail = 64 << 10
)

// ContentID returns an identity of the file's contents that survives copying, recorded in saved
// sketches so that a sketch is never merged with the data it was built from. For a remote object
// with an ETag it is "etag:" and the ETag with the object's key. Otherwise it is "sha256:" and
// the hex SHA-256 of the size (8 bytes, little-endian), the first 4 KiB and the last 64 KiB (the
// whole file when smaller): a fingerprint, not a hash of every byte, that holds Parquet's and
// Arrow's footer, where every row group's offsets, sizes and statistics are written.
func ContentID(f File) (string, error) {
	if f.ETag != "" && isRemote(f.Path) {
		key := f.Path
		if _, k, ok := strings.Cut(strings.TrimPrefix(f.key, "etag:"), ":"); ok {
			key = k
		}
		return "etag:" + f.ETag + ":" + key, nil
	}
	h, err := openPath(f.Path)
	if err != nil {
		return "", newError(f.Path, "", pathCause(err))
	}
	defer h.Close()
	fi, err := h.Stat()
	if err != nil {
		return "", newError(f.Path, "", pathCause(err))
	}
	size := fi.Size()
	sum := sha256.New()
	sum.Write(binary.LittleEndian.AppendUint64(nil, uint64(size)))
	if size <= fingerprintHead+fingerprintTail {
		if _, err := io.Copy(sum, io.NewSectionReader(h, 0, size)); err != nil {
			return "", newError(f.Path, "", fmt.Errorf("fingerprint: %w", err))
		}
	} else {
		for _, r := range [][2]int64{{0, fingerprintHead}, {size - fingerprintTail, fingerprintTail}} {
			if _, err := io.Copy(sum, io.NewSectionReader(h, r[0], r[1])); err != nil {
				return "", newError(f.Path, "", fmt.Errorf("fingerprint: %w", err))
			}
		}
	}
	return "sha256:" + hex.EncodeToString(sum.Sum(nil)), nil
}

// Screen reads the footer or schema of every file as [Open] does and returns the files that
// opened and, for the others, why not. It lets a caller skip unreadable files before Open.
func Screen(files []File) (ok []File, bad []Skipped) {
	d := &Dataset{Files: append([]File(nil), files...), files: make([]openFile, len(files)), columns: new(sync.Pool)}
	for i, f := range files {
		if _, err := d.openFile(i, f); err != nil {
			var re *ReadError
			reason := oneLine(err.Error())
			if errors.As(err, &re) && re.Err != nil {
				reason = oneLine(re.Err.Error())
			}
			bad = append(bad, Skipped{Path: f.Path, Reason: reason, Err: err})
			d.files[i] = openFile{}
			continue
		}
		d.files[i] = openFile{}
		ok = append(ok, f)
	}
	return ok, bad
}
