package stream_test

import (
	"errors"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"github.com/kgauge/kgauge/stream"
)

// TestDiscoverIntegrity: damaged data files inside a directory are errors, or skipped and listed
// with SkipUnreadable; links the glob cannot match are never followed; one file reached by two
// names is taken once under its own name.
func TestDiscoverIntegrity(t *testing.T) {
	root := t.TempDir()
	g := newGen(10, 1)
	good := filepath.Join(root, "a.parquet")
	writePGo(t, good, g)
	data, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	cut := filepath.Join(root, "b.parquet")
	os.WriteFile(cut, data[:len(data)/2], 0o644)
	noExt := filepath.Join(root, "c") // Parquet magic at the start, no extension, cut
	os.WriteFile(noExt, data[:len(data)-3], 0o644)
	os.WriteFile(filepath.Join(root, "notes.txt"), []byte("not data"), 0o644)

	_, err = stream.Discover([]string{root})
	if !errors.Is(err, stream.ErrUnreadableFile) {
		t.Fatalf("directory with a cut file: %v, want ErrUnreadableFile", err)
	}
	var re *stream.ReadError
	if !errors.As(err, &re) || re.File != cut {
		t.Errorf("error %v does not name %s first", err, cut)
	}
	d, err := stream.DiscoverWith([]string{root}, stream.DiscoverOptions{SkipUnreadable: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(d.Files) != 1 || d.Files[0].Path != good {
		t.Errorf("files %v, want only %s", d.Files, good)
	}
	var skipped []string
	for _, s := range d.Skipped {
		skipped = append(skipped, s.Path)
		if s.Reason == "" || !errors.Is(s.Err, stream.ErrUnreadableFile) {
			t.Errorf("%s: reason %q, err %v", s.Path, s.Reason, s.Err)
		}
	}
	if want := []string{cut, noExt}; !slices.Equal(skipped, want) {
		t.Errorf("skipped %v, want %v", skipped, want)
	}
	os.Remove(cut)
	os.Remove(noExt)

	// Links: a dangling one outside the glob is never looked at; a link to good is good once.
	os.Symlink("missing", filepath.Join(root, "stale"))
	if files, err := stream.Discover([]string{filepath.Join(root, "*.parquet")}); err != nil || len(files) != 1 {
		t.Errorf("glob beside a dangling link: %v, %v", files, err)
	}
	if _, err := stream.Discover([]string{root}); !errors.Is(err, stream.ErrUnreadableFile) {
		t.Errorf("directory with a dangling link: %v, want ErrUnreadableFile", err)
	}
	os.Remove(filepath.Join(root, "stale"))
	alias := filepath.Join(root, "0-alias.parquet") // sorts first
	os.Symlink("a.parquet", alias)
	other := t.TempDir()
	hard := filepath.Join(other, "hard.parquet")
	if err := os.Link(good, hard); err != nil {
		t.Skipf("no hard links here: %v", err)
	}
	files, err := stream.Discover([]string{alias, root, hard})
	if err != nil {
		t.Fatal(err)
	}
	if len(files) != 1 || files[0].Path != good && files[0].Path != hard {
		t.Errorf("one file by three names: %v, want it once under a name that is not a link", files)
	}
	k1, _ := stream.FileKey(alias)
	k2, _ := stream.FileKey(good)
	if k1 == "" || k1 != k2 {
		t.Errorf("FileKey of a link %q and its target %q differ", k1, k2)
	}
}

// TestContentID: copies have the same content identity; a change at either end of the file, or a
// different size, gives another.
func TestContentID(t *testing.T) {
	dir := t.TempDir()
	g := newGen(20000, 3)
	a := filepath.Join(dir, "a.parquet")
	writePGo(t, a, g)
	data, _ := os.ReadFile(a)
	if len(data) < 80<<10 {
		t.Fatalf("fixture of %d bytes is too small to test the two ends", len(data))
	}
	id := func(p string) string {
		t.Helper()
		files, err := stream.Discover([]string{p})
		if err != nil {
			t.Fatal(err)
		}
		s, err := stream.ContentID(files[0])
		if err != nil {
			t.Fatal(err)
		}
		return s
	}
	put := func(name string, b []byte) string {
		p := filepath.Join(dir, name)
		os.WriteFile(p, b, 0o644)
		return p
	}
	ida := id(a)
	if id(put("copy.parquet", data)) != ida {
		t.Error("a copy has another identity")
	}
	head := slices.Clone(data)
	head[100] ^= 1
	tail := slices.Clone(data)
	tail[len(tail)-20] ^= 1
	for name, b := range map[string][]byte{"head.parquet": head, "tail.parquet": tail} {
		if id(put(name, b)) == ida {
			t.Errorf("%s: a change in the fingerprinted part kept the identity", name)
		}
	}
}

// BenchmarkContentID prices the content identity of one file: two small reads and a SHA-256 of
// 68 KiB, whatever the file's size.
func BenchmarkContentID(b *testing.B) {
	p := filepath.Join(b.TempDir(), "a.parquet")
	writePGo(b, p, newGen(200000, 3))
	files, err := stream.Discover([]string{p})
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for range b.N {
		if _, err := stream.ContentID(files[0]); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkOpenFooter is BenchmarkContentID's yardstick: opening the same file's footer, which
// every estimate does once per file.
func BenchmarkOpenFooter(b *testing.B) {
	p := filepath.Join(b.TempDir(), "a.parquet")
	writePGo(b, p, newGen(200000, 3))
	files, err := stream.Discover([]string{p})
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for range b.N {
		ds, err := stream.Open(files, stream.Options{})
		if err != nil {
			b.Fatal(err)
		}
		ds.Close()
	}
}
