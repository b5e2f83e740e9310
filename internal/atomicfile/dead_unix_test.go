//go:build unix

package atomicfile

import (
	"os/exec"
	"testing"
)

// deadPID returns the id of a process that has exited and been reaped.
func deadPID(t *testing.T) int {
	t.Helper()
	cmd := exec.Command("true")
	if err := cmd.Run(); err != nil {
		t.Skipf("cannot run a child process: %v", err)
	}
	if processAlive(cmd.Process.Pid) {
		t.Skip("the child's process id is already reused")
	}
	return cmd.Process.Pid
}
