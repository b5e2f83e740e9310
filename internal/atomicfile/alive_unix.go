//go:build unix

package atomicfile

import (
	"errors"
	"syscall"
)

// processAlive reports whether a process with id pid exists (signal 0; EPERM means it exists
// under another user).
func processAlive(pid int) bool {
	err := syscall.Kill(pid, 0)
	return err == nil || errors.Is(err, syscall.EPERM)
}
