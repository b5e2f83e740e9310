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

// TestInterruptEveryStage builds the binary and interrupts runs whose time goes to one stage each
// (the probe's k-means++ seeding for a thousand k, the pass, the criteria's restarts and gap
// references, a wide covariance's eigen decomposition, a plan's timed probe): each must exit 130
// within a second of SIGINT, print nothing on stdout and leave no output file. Before issue 14 a
// run seeding k = 538 ignored SIGINT for 655 s, and --restarts 1000000 and --gap-refs 100000 did not
// answer it at all.
func TestInterruptEveryStage(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary and writes test files")
	}
	dir := t.TempDir()
	bin := buildKgauge(t, dir)
	mix := func(name string, rows, dims int) string {
		p := filepath.Join(dir, name)
		opt := synth.DefaultMixtureOptions()
		opt.Rows, opt.Dims, opt.K = rows, dims, 4
		if err := synth.WriteMixture(p, opt); err != nil {
			t.Fatal(err)
		}
		return p
	}
	small := mix("small.parquet", 3000, 2)
	big := mix("big.parquet", 1_000_000, 16)
	wide := mix("wide.parquet", 3000, 1000)
	for _, tc := range []struct {
		stage string
		args  []string
	}{
		{"probe seeding", []string{"estimate", "--max-k", "1000", "--coreset", "2000", small}},
		{"pass", []string{"estimate", "--workers", "1", "--batch-rows", "64", big}},
		{"criteria restarts", []string{"estimate", "--max-k", "40", "--restarts", "100", "--gap-refs", "1000", "--gap-sample", "3000", small}},
		{"wide data (covariance, eigen decomposition)", []string{"estimate", "--max-k", "3", "--workers", "1", wide}},
		{"plan probe", []string{"plan", "--max-k", "1000", "--coreset", "2000", small}},
	} {
		t.Run(tc.stage, func(t *testing.T) {
			out := filepath.Join(dir, "result.json")
			args := append([]string{tc.args[0], "--quiet", "--out", out}, tc.args[1:]...)
			cmd := exec.Command(bin, args...)
			var stdout, stderr bytes.Buffer
			cmd.Stdout, cmd.Stderr = &stdout, &stderr
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			exited := make(chan error, 1)
			go func() { exited <- cmd.Wait() }()
			select {
			case err := <-exited:
				t.Fatalf("the run ended before the signal (%v, %s); it does not exercise the stage", err, stderr.String())
			case <-time.After(1500 * time.Millisecond):
			}
			sent := time.Now()
			if err := cmd.Process.Signal(syscall.SIGINT); err != nil {
				t.Fatal(err)
			}
			var err error
			select {
			case err = <-exited:
			case <-time.After(30 * time.Second):
				cmd.Process.Kill()
				<-exited
				t.Fatalf("still running 30 s after SIGINT")
			}
			took := time.Since(sent)
			t.Logf("stopped %v after SIGINT", took.Round(time.Millisecond))
			if took > time.Second {
				t.Errorf("took %v to stop, want at most 1 s", took)
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
			if _, err := os.Stat(out); !os.IsNotExist(err) {
				t.Errorf("--out file left behind (%v)", err)
			}
		})
	}
}

// TestFIFOInput: a FIFO named as input is refused at once with exit 3 naming it, instead of
// blocking in open (before issue 14 the run hung there and ignored signals).
func TestFIFOInput(t *testing.T) {
	fifo := filepath.Join(t.TempDir(), "pipe.parquet")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	for _, command := range []string{"estimate", "plan"} {
		done := make(chan struct{})
		var code int
		var errs string
		go func() {
			defer close(done)
			code, _, errs = run(t, command, "--quiet", fifo)
		}()
		select {
		case <-done:
		case <-time.After(10 * time.Second):
			// Unblock the open so that the goroutine ends with the test.
			f, _ := os.OpenFile(fifo, os.O_WRONLY, 0)
			f.Close()
			t.Fatalf("%s: still blocked on the FIFO after 10 s", command)
		}
		if code != ExitInput || !strings.Contains(errs, "pipe.parquet") || !strings.Contains(errs, "not a regular file") {
			t.Errorf("%s: exit %d, stderr %q; want exit 3 naming the FIFO as not a regular file", command, code, errs)
		}
	}
}

// TestInternalErrorOneLine: a bug (a panic in the command) is exit 1 with one line that asks for a
// report, and no stack trace.
func TestInternalErrorOneLine(t *testing.T) {
	beforeCommand = func([]string) { panic("index out of range [-1]") }
	defer func() { beforeCommand = nil }()
	code, out, errs := run(t, "version")
	msg := strings.TrimSpace(errs)
	if code != ExitInternal || out != "" || strings.Count(msg, "\n") != 0 ||
		!strings.Contains(msg, "please report") || !strings.Contains(msg, "index out of range") || strings.Contains(msg, "goroutine") {
		t.Errorf("exit %d, stdout %q, stderr %q; want exit 1 and one line asking for a report", code, out, errs)
	}
}

// TestLedgerIsDirectory: a --ledger that names a directory is bad input (exit 3) naming it, not an
// internal error.
func TestLedgerIsDirectory(t *testing.T) {
	root := lake(t, smallLoads())
	d := filepath.Join(t.TempDir(), "ledger")
	if err := os.Mkdir(d, 0o755); err != nil {
		t.Fatal(err)
	}
	code, _, errs := run(t, "track", "--quiet", "--max-k", "3", root, "--ledger", d)
	if code != ExitInput || !strings.Contains(errs, d) || strings.Contains(errs, "internal") {
		t.Errorf("exit %d, stderr %q; want exit 3 naming %s", code, errs, d)
	}
}
