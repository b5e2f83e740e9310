// Package atomicfile writes files so that readers see either the old content or the whole new one,
// never a part: the data goes to a temporary file in the same directory, is synced, and is renamed
// over the target.
package atomicfile

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"
)

// WrapWriter, when set, wraps the temporary file's writer before fill sees it. It is a test seam
// (a full disk is simulated with a writer that fails with ENOSPC); production code leaves it nil.
var WrapWriter func(io.Writer) io.Writer

// TempPrefix returns the name prefix of the temporary files Write makes for target:
// ".BASE.tmp-". The full name is the prefix, the writing process's id, "-" and a random number.
func TempPrefix(target string) string { return "." + filepath.Base(target) + ".tmp-" }

// StaleAge is how old a temporary file of Write's naming must be before a write removes it when
// its process cannot be checked (a name without a process id, or a system without signals).
const StaleAge = time.Hour

// Write calls fill with a writer on a temporary file next to path and, when fill succeeds, syncs the
// file and renames it to path. On any failure the temporary file is removed and path is untouched.
//
// A symbolic link at path is followed (see [Resolve]): the file it points to is replaced and the
// link stays. After a successful rename, temporary files of this naming next to the target that a
// killed writer left behind are removed: those whose process is gone, and those older than
// [StaleAge] whatever their name says.
func Write(path string, perm os.FileMode, fill func(w io.Writer) error) (err error) {
	target, err := Resolve(path)
	if err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	dir := filepath.Dir(target)
	f, err := os.CreateTemp(dir, TempPrefix(target)+strconv.Itoa(os.Getpid())+"-*")
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
	if err = os.Rename(tmp, target); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if d, derr := os.Open(dir); derr == nil {
		d.Sync()
		d.Close()
	}
	RemoveStale(target)
	return nil
}

// RemoveStale removes the temporary files of Write's naming next to target that no running
// writer owns: the process id in the name is not running (or is this process, whose own write is
// done), or the file is older than StaleAge. It returns the paths removed; files it cannot remove
// are left alone.
func RemoveStale(target string) []string {
	dir, prefix := filepath.Dir(target), TempPrefix(target)
	ents, err := os.ReadDir(dir)
	if err != nil {
		return nil
	}
	var removed []string
	for _, e := range ents {
		name := e.Name()
		if e.IsDir() || !strings.HasPrefix(name, prefix) {
			continue
		}
		stale := false
		if pid, _, ok := strings.Cut(strings.TrimPrefix(name, prefix), "-"); ok {
			if n, err := strconv.Atoi(pid); err == nil && n > 0 {
				stale = n == os.Getpid() || !processAlive(n)
			}
		}
		if !stale {
			if info, err := e.Info(); err == nil && time.Since(info.ModTime()) > StaleAge {
				stale = true
			}
		}
		if stale {
			p := filepath.Join(dir, name)
			if os.Remove(p) == nil {
				removed = append(removed, p)
			}
		}
	}
	return removed
}
