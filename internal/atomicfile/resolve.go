package atomicfile

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
)

// maxLinks bounds the symbolic links Resolve follows, as the kernel does (ELOOP).
const maxLinks = 40

// Resolve returns the absolute path a write to path lands on: symbolic links are followed, the
// last one included even when its target does not exist yet, so that writing through a link
// updates the file it points to instead of replacing the link. A missing path resolves to itself
// below its resolved directory.
func Resolve(path string) (string, error) {
	p, err := filepath.Abs(path)
	if err != nil {
		return "", fmt.Errorf("resolve %s: %w", path, err)
	}
	for range maxLinks {
		fi, err := os.Lstat(p)
		switch {
		case errors.Is(err, fs.ErrNotExist):
			dir, err := filepath.EvalSymlinks(filepath.Dir(p))
			if err != nil {
				return p, nil // the directory is missing too; writing will say so
			}
			return filepath.Join(dir, filepath.Base(p)), nil
		case err != nil:
			return "", fmt.Errorf("resolve %s: %w", path, err)
		case fi.Mode()&fs.ModeSymlink == 0:
			r, err := filepath.EvalSymlinks(p)
			if err != nil {
				return "", fmt.Errorf("resolve %s: %w", path, err)
			}
			return r, nil
		}
		t, err := os.Readlink(p)
		if err != nil {
			return "", fmt.Errorf("resolve %s: %w", path, err)
		}
		if !filepath.IsAbs(t) {
			t = filepath.Join(filepath.Dir(p), t)
		}
		p = filepath.Clean(t)
	}
	return "", fmt.Errorf("resolve %s: more than %d levels of symbolic links", path, maxLinks)
}
