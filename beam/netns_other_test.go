//go:build !linux

package beam

import "errors"

// isolate cannot make a loopback-only network namespace outside Linux.
func isolate() (int, bool) {
	isolationError = errors.New("network namespaces need Linux")
	return 0, false
}
