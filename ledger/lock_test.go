//go:build unix

package ledger

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// holdLockEnv makes the test binary a helper process that holds a ledger's lock until its stdin
// closes (see TestMain).
const holdLockEnv = "KGAUGE_LEDGER_TEST_HOLD_LOCK"

func TestMain(m *testing.M) {
	if path := os.Getenv(holdLockEnv); path != "" {
		l, err := Lock(context.Background(), path, 0)
		if err != nil {
			fmt.Println("error:", err)
			os.Exit(1)
		}
		fmt.Println("locked")
		bufio.NewReader(os.Stdin).ReadString('\n') // until the parent closes stdin
		l.Unlock()
		os.Exit(0)
	}
	os.Exit(m.Run())
}

func TestLockSameProcess(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ledger.jsonl")
	ctx := context.Background()
	first, err := Lock(ctx, path, 0)
	if err != nil {
		t.Fatal(err)
	}
	// flock locks belong to the open file, so a second open in this process contends like another run.
	_, err = Lock(ctx, path, 0)
	var le *LockError
	if !errors.As(err, &le) || !errors.Is(err, ErrLocked) {
		t.Fatalf("second Lock: %v, want a *LockError wrapping ErrLocked", err)
	}
	if le.Path != LockPath(path) || !strings.Contains(err.Error(), path+".lock") {
		t.Errorf("error %q does not name the lock file %s", err, LockPath(path))
	}
	if _, err := Lock(ctx, path, 120*time.Millisecond); !errors.Is(err, ErrLocked) {
		t.Errorf("Lock with a short wait while held: %v, want ErrLocked", err)
	}
	cctx, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := Lock(cctx, path, time.Minute); !errors.Is(err, context.Canceled) {
		t.Errorf("Lock with a cancelled context: %v, want context.Canceled", err)
	}

	// A waiting Lock gets the lock once the holder releases it.
	got := make(chan error, 1)
	go func() {
		l, err := Lock(ctx, path, time.Minute)
		if err == nil {
			err = l.Unlock()
		}
		got <- err
	}()
	time.Sleep(100 * time.Millisecond)
	if err := first.Unlock(); err != nil {
		t.Fatal(err)
	}
	if err := <-got; err != nil {
		t.Errorf("waiting Lock: %v", err)
	}
	if _, err := os.Stat(LockPath(path)); err != nil {
		t.Errorf("lock file removed: %v", err)
	}
}

func TestLockOtherProcess(t *testing.T) {
	path := filepath.Join(t.TempDir(), "ledger.jsonl")
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), holdLockEnv+"="+path)
	stdin, err := cmd.StdinPipe()
	if err != nil {
		t.Fatal(err)
	}
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer cmd.Wait()
	line, err := bufio.NewReader(stdout).ReadString('\n')
	if err != nil || line != "locked\n" {
		stdin.Close()
		t.Fatalf("helper process: %q, %v", line, err)
	}
	ctx := context.Background()
	if _, err := Lock(ctx, path, 0); !errors.Is(err, ErrLocked) {
		t.Errorf("Lock while another process holds it: %v, want ErrLocked", err)
	}
	stdin.Close() // the helper unlocks and exits
	l, err := Lock(ctx, path, time.Minute)
	if err != nil {
		t.Fatalf("Lock after the other process released it: %v", err)
	}
	l.Unlock()
}
