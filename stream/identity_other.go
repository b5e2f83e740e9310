//go:build !unix

package stream

import "io/fs"

// fileKey is the absolute path of the file with symbolic links resolved (no inodes here).
func fileKey(path string, _ fs.FileInfo) string { return pathKey(path) }
