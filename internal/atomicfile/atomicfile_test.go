package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"syscall"
	"testing"
)

func TestWrite(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.txt")
	if err := os.WriteFile(path, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	boom := errors.New("boom")
	err := Write(path, 0o644, func(w io.Writer) error {
		io.WriteString(w, "half")
		return boom
	})
	if !errors.Is(err, boom) {
		t.Fatalf("failed fill: got %v, want %v", err, boom)
	}
	if got, _ := os.ReadFile(path); string(got) != "old" {
		t.Fatalf("after a failed write the file holds %q, want the old content", got)
	}
	if err := Write(path, 0o600, func(w io.Writer) error { _, err := io.WriteString(w, "new"); return err }); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(path); string(got) != "new" {
		t.Fatalf("got %q, want %q", got, "new")
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		t.Fatalf("temporary files left behind: %v", entries)
	}
	if err := Write(filepath.Join(dir, "missing", "x"), 0o644, func(io.Writer) error { return nil }); err == nil {
		t.Fatal("writing into a missing directory succeeded")
	}
}

// TestFullDisk: a write that fails with ENOSPC (simulated through WrapWriter) leaves neither the
// target nor a temporary file.
func TestFullDisk(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.json")
	WrapWriter = func(io.Writer) io.Writer { return fullWriter{} }
	defer func() { WrapWriter = nil }()
	err := Write(path, 0o644, func(w io.Writer) error { _, err := io.WriteString(w, "{}"); return err })
	if !errors.Is(err, syscall.ENOSPC) {
		t.Fatalf("got %v, want ENOSPC", err)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Fatalf("files left behind: %v", entries)
	}
}

// fullWriter fails every write as a full disk does.
type fullWriter struct{}

func (fullWriter) Write([]byte) (int, error) { return 0, syscall.ENOSPC }
