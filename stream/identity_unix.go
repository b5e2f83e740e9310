//go:build unix

package stream

import (
	"fmt"
	"io/fs"
	"syscall"
)

// fileKey is the device and inode of the file fi describes (fi from os.Stat of path).
func fileKey(path string, fi fs.FileInfo) string {
	if st, ok := fi.Sys().(*syscall.Stat_t); ok {
		return fmt.Sprintf("inode:%d:%d", uint64(st.Dev), uint64(st.Ino))
	}
	return pathKey(path)
}
