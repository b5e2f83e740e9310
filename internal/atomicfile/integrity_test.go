package atomicfile

import (
	"io"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"
)

func writeString(path, s string) error {
	return Write(path, 0o644, func(w io.Writer) error { _, err := io.WriteString(w, s); return err })
}

// TestWriteThroughSymlink: writing to a symbolic link replaces the file it points to (relative and
// chained links, and a dangling one, whose target is created) and leaves the link a link.
func TestWriteThroughSymlink(t *testing.T) {
	dir := t.TempDir()
	real := filepath.Join(dir, "real.jsonl")
	if err := os.WriteFile(real, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	sub := filepath.Join(dir, "sub")
	os.Mkdir(sub, 0o755)
	link1 := filepath.Join(sub, "link1")
	link2 := filepath.Join(dir, "link2")
	if err := os.Symlink("../real.jsonl", link1); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(link1, link2); err != nil {
		t.Fatal(err)
	}
	if err := writeString(link2, "new"); err != nil {
		t.Fatal(err)
	}
	for _, l := range []string{link1, link2} {
		if fi, err := os.Lstat(l); err != nil || fi.Mode()&os.ModeSymlink == 0 {
			t.Errorf("%s is no longer a symbolic link (%v)", l, err)
		}
	}
	if got, _ := os.ReadFile(real); string(got) != "new" {
		t.Errorf("target holds %q, want new", got)
	}
	dangling := filepath.Join(dir, "dangling")
	os.Symlink("made.txt", dangling)
	if err := writeString(dangling, "x"); err != nil {
		t.Fatal(err)
	}
	if got, err := os.ReadFile(filepath.Join(dir, "made.txt")); err != nil || string(got) != "x" {
		t.Errorf("dangling link's target: %q, %v", got, err)
	}
	loop := filepath.Join(dir, "loop")
	os.Symlink("loop", loop)
	if err := writeString(loop, "x"); err == nil {
		t.Error("a write through a link loop succeeded")
	}
}

// TestRemoveStale: after a successful write, temporary files of Write's naming left by a process
// that is gone, and old ones of any owner, are removed; a live writer's fresh file and other
// files stay.
func TestRemoveStale(t *testing.T) {
	dir := t.TempDir()
	target := filepath.Join(dir, "result.json")
	// A process id that is not running: a child that has exited and been reaped.
	dead := deadPID(t)
	put := func(name string, age time.Duration) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte("partial"), 0o644); err != nil {
			t.Fatal(err)
		}
		mt := time.Now().Add(-age)
		os.Chtimes(p, mt, mt)
		return p
	}
	killed := put(".result.json.tmp-"+strconv.Itoa(dead)+"-123", 0)
	oldStyle := put(".result.json.tmp-4567", 2*StaleAge)
	live := put(".result.json.tmp-"+strconv.Itoa(os.Getppid())+"-9", 0) // our parent is running
	other := put(".other.json.tmp-"+strconv.Itoa(dead)+"-1", 0)
	if err := writeString(target, "{}"); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{killed, oldStyle} {
		if _, err := os.Stat(p); !os.IsNotExist(err) {
			t.Errorf("stale %s not removed", filepath.Base(p))
		}
	}
	for _, p := range []string{live, other, target} {
		if _, err := os.Stat(p); err != nil {
			t.Errorf("%s removed: %v", filepath.Base(p), err)
		}
	}
}
