package main

import (
	"bytes"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/kgauge/kgauge/bench/synth"
)

// TestInterrupt builds the binary, starts an estimate on a file that takes seconds to read, sends
// SIGINT (then, in a second run, SIGTERM) half a second in, and checks that the run stops promptly
// with exit code 130, one line on stderr, nothing on stdout, and no --out or --save-sketch file.
//
// The bound on the stop time is generous (the machines are shared, see PERF-NOTES.md); the
// measured time is logged.
func TestInterrupt(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and writes a 250 MB file")
	}
	dir := t.TempDir()
	bin := buildKgauge(t, dir)
	data := filepath.Join(dir, "big.parquet")
	opt := synth.DefaultMixtureOptions()
	opt.Rows = 2_000_000
	if err := synth.WriteMixture(data, opt); err != nil {
		t.Fatal(err)
	}
	defer os.Remove(data)
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGTERM} {
		t.Run(sig.String(), func(t *testing.T) {
			out := filepath.Join(dir, "result.json")
			sk := filepath.Join(dir, "run.kgs")
			cmd := exec.Command(bin, "estimate", "--quiet", "--workers", "1", "--out", out, "--save-sketch", sk, data)
			var stdout, stderr bytes.Buffer
			cmd.Stdout, cmd.Stderr = &stdout, &stderr
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			exited := make(chan error, 1)
			go func() { exited <- cmd.Wait() }()
			select {
			case err := <-exited:
				t.Fatalf("the run ended before the signal (%v); the input is too small to test an interrupt", err)
			case <-time.After(500 * time.Millisecond):
			}
			sent := time.Now()
			if err := cmd.Process.Signal(sig); err != nil {
				t.Fatal(err)
			}
			var err error
			select {
			case err = <-exited:
			case <-time.After(30 * time.Second):
				cmd.Process.Kill()
				t.Fatalf("still running 30 s after %v", sig)
			}
			took := time.Since(sent)
			t.Logf("stopped %v after %v", took.Round(time.Millisecond), sig)
			if took > 5*time.Second {
				t.Errorf("took %v to stop after %v", took, sig)
			}
			var ee *exec.ExitError
			if !errors.As(err, &ee) || ee.ExitCode() != ExitInterrupted {
				t.Errorf("exit %v, want %d; stderr: %s", err, ExitInterrupted, stderr.String())
			}
			if stdout.Len() != 0 {
				t.Errorf("stdout not empty: %q", stdout.String())
			}
			if msg := strings.TrimSpace(stderr.String()); strings.Count(msg, "\n") != 0 || !strings.Contains(msg, "interrupted") {
				t.Errorf("stderr %q, want one line saying interrupted", msg)
			}
			entries, _ := os.ReadDir(dir)
			for _, e := range entries {
				if e.Name() != "kgauge" && e.Name() != "big.parquet" {
					t.Errorf("left behind: %s", e.Name())
				}
			}
		})
	}
}

// buildKgauge builds the kgauge binary into dir and returns its path.
func buildKgauge(t *testing.T, dir string) string {
	t.Helper()
	bin := filepath.Join(dir, "kgauge")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}
