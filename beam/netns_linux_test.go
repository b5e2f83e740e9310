//go:build linux

package beam

import (
	"errors"
	"fmt"
	"os"
	"os/exec"
	"syscall"

	"golang.org/x/sys/unix"
)

// netnsEnv marks the copy of the test binary that runs inside its own network namespace.
const netnsEnv = "KGAUGE_BEAM_TEST_NETNS"

// isolate runs the test binary again inside a new user and network namespace whose only interface
// is the loopback, because prism's job server listens on every interface (":0") and tests may
// serve on 127.0.0.1 only. It returns (exit code, true) in the parent once the copy has run, and
// (0, false) in the copy or where namespaces are not available (isolated then says which).
func isolate() (int, bool) {
	if os.Getenv(netnsEnv) == "1" {
		if err := loopbackUp(); err != nil {
			fmt.Fprintln(os.Stderr, "beam test: bring up the loopback interface:", err)
			return 1, true
		}
		isolated = true
		return 0, false
	}
	cmd := exec.Command(os.Args[0], os.Args[1:]...)
	cmd.Env = append(os.Environ(), netnsEnv+"=1")
	cmd.Stdin, cmd.Stdout, cmd.Stderr = os.Stdin, os.Stdout, os.Stderr
	cmd.SysProcAttr = &syscall.SysProcAttr{
		Cloneflags:  syscall.CLONE_NEWUSER | syscall.CLONE_NEWNET,
		UidMappings: []syscall.SysProcIDMap{{ContainerID: 0, HostID: os.Getuid(), Size: 1}},
		GidMappings: []syscall.SysProcIDMap{{ContainerID: 0, HostID: os.Getgid(), Size: 1}},
	}
	err := cmd.Run()
	var exit *exec.ExitError
	switch {
	case err == nil:
		return 0, true
	case errors.As(err, &exit):
		return exit.ExitCode(), true
	}
	isolationError = err
	return 0, false
}

// loopbackUp sets the loopback interface of the current network namespace up (it starts down).
func loopbackUp() error {
	fd, err := unix.Socket(unix.AF_INET, unix.SOCK_DGRAM|unix.SOCK_CLOEXEC, 0)
	if err != nil {
		return err
	}
	defer unix.Close(fd)
	ifr, err := unix.NewIfreq("lo")
	if err != nil {
		return err
	}
	if err := unix.IoctlIfreq(fd, unix.SIOCGIFFLAGS, ifr); err != nil {
		return err
	}
	ifr.SetUint16(ifr.Uint16() | unix.IFF_UP)
	return unix.IoctlIfreq(fd, unix.SIOCSIFFLAGS, ifr)
}
