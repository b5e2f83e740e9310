// Package atomicfile writes files so that readers see either the old content or the whole new one,
// never a part: the data goes to a temporary file in the same directory, is synced, and is renamed
// over the target.
package atomicfile

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// WrapWriter, when set, wraps the temporary file's writer before fill sees it. It is a test seam
// (a full disk is simulated with a writer that fails with ENOSPC); production code leaves it nil.
var WrapWriter func(io.Writer) io.Writer

// Write calls fill with a writer on a temporary file next to path and, when fill succeeds, syncs the
// file and renames it to path. On any failure the temporary file is removed and path is untouched.
func Write(path string, perm os.FileMode, fill func(w io.Writer) error) (err error) {
	dir := filepath.Dir(path)
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	var w io.Writer = f
	if WrapWriter != nil {
		w = WrapWriter(f)
	}
	if err = fill(w); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if err = f.Chmod(perm); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if d, derr := os.Open(dir); derr == nil {
		d.Sync()
		d.Close()
	}
	return nil
}
