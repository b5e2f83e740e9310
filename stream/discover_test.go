package stream_test

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"github.com/kgauge/kgauge/stream"
)

func TestDiscover(t *testing.T) {
	root := t.TempDir()
	g := newGen(10, 1)
	mk := func(rel string) string {
		p := filepath.Join(root, rel)
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		switch filepath.Ext(rel) {
		case ".parquet", ".data":
			writePGo(t, p, g)
		case ".arrow":
			writeArrowIPC(t, p, g, 5, true)
		case ".arrows":
			writeArrowIPC(t, p, g, 5, false)
		default:
			if err := os.WriteFile(p, []byte("# not data\n"), 0o644); err != nil {
				t.Fatal(err)
			}
		}
		return p
	}
	a := mk("lake/year=2024/month=01/a.parquet")
	b := mk("lake/year=2024/month=02/b.arrow")
	c := mk("lake/year=2025/c.arrows")
	d := mk("lake/d.data") // Parquet without the extension: sniffed
	mk("lake/_SUCCESS")
	mk("lake/README")
	mk("lake/_tmp/x.parquet")
	mk("lake/.hidden/y.parquet")
	mk("lake/year=2024/.z.parquet")
	mk("other/e.parquet")
	lake := filepath.Join(root, "lake")

	cases := []struct {
		name     string
		patterns []string
		want     []string
	}{
		{"Dir", []string{lake}, []string{d, a, b, c}},
		{"DoubleStar", []string{filepath.Join(lake, "**", "*.parquet")}, []string{a}},
		{"DoubleStarAll", []string{filepath.Join(lake, "**")}, []string{d, a, b, c}},
		{"StarDir", []string{filepath.Join(lake, "year=*")}, []string{a, b, c}},
		{"Mid", []string{filepath.Join(lake, "year=2024", "*", "*")}, []string{a, b}},
		{"FileAndDup", []string{a, filepath.Join(lake, "year=2024"), a}, []string{a, b}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			files, err := stream.Discover(tc.patterns)
			if err != nil {
				t.Fatal(err)
			}
			var got []string
			for _, f := range files {
				got = append(got, f.Path)
			}
			want := slices.Clone(tc.want)
			slices.Sort(want)
			if !slices.Equal(got, want) {
				t.Fatalf("got %v\nwant %v", got, want)
			}
		})
	}

	t.Run("FormatsAndPartitions", func(t *testing.T) {
		files, err := stream.Discover([]string{lake})
		if err != nil {
			t.Fatal(err)
		}
		byPath := map[string]stream.File{}
		for _, f := range files {
			byPath[f.Path] = f
		}
		checks := []struct {
			path   string
			format stream.Format
			part   []stream.KeyValue
		}{
			{a, stream.Parquet, []stream.KeyValue{{"year", "2024"}, {"month", "01"}}},
			{b, stream.ArrowFile, []stream.KeyValue{{"year", "2024"}, {"month", "02"}}},
			{c, stream.ArrowStream, []stream.KeyValue{{"year", "2025"}}},
			{d, stream.Parquet, nil},
		}
		for _, ck := range checks {
			f := byPath[ck.path]
			if f.Format != ck.format || !slices.Equal(f.Partition, ck.part) || f.Size <= 0 {
				t.Errorf("%s: format %v partition %v size %d; want %v %v", ck.path, f.Format, f.Partition, f.Size, ck.format, ck.part)
			}
		}
	})

	errCases := []struct {
		name    string
		pattern string
		sent    error
	}{
		{"Missing", filepath.Join(root, "nope"), fs.ErrNotExist},
		{"EmptyGlob", filepath.Join(lake, "**", "*.csv"), stream.ErrNoDataFiles},
		{"NamedNotData", filepath.Join(lake, "README"), nil},
	}
	empty := filepath.Join(root, "empty")
	if err := os.Mkdir(empty, 0o755); err != nil {
		t.Fatal(err)
	}
	errCases = append(errCases, struct {
		name    string
		pattern string
		sent    error
	}{"EmptyDir", empty, stream.ErrNoDataFiles})
	for _, tc := range errCases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := stream.Discover([]string{tc.pattern})
			checkReadError(t, err, tc.sent, tc.pattern, "", "")
		})
	}
}

func TestShuffle(t *testing.T) {
	var units []stream.Unit
	for i := 0; i < 50; i++ {
		units = append(units, stream.Unit{File: i / 10, Index: i % 10, Rows: int64(i)})
	}
	orig := slices.Clone(units)
	s1 := stream.Shuffle(units, 42)
	s2 := stream.Shuffle(units, 42)
	s3 := stream.Shuffle(units, 43)
	if !slices.Equal(units, orig) {
		t.Fatal("Shuffle modified its input")
	}
	if !slices.Equal(s1, s2) {
		t.Fatal("same seed gave different orders")
	}
	if slices.Equal(s1, s3) || slices.Equal(s1, units) {
		t.Fatal("different seeds (or the identity) gave the same order")
	}
	sorted := slices.Clone(s1)
	slices.SortFunc(sorted, func(x, y stream.Unit) int { return int(x.Rows - y.Rows) })
	if !slices.Equal(sorted, units) {
		t.Fatal("Shuffle is not a permutation")
	}
}

// TestDiscoverSketches: with SketchMagic set, files that start with it are listed as sketches, in
// directories, globs and when named, beside the data files; without it they are passed over (or
// refused when named).
func TestDiscoverSketches(t *testing.T) {
	root := t.TempDir()
	g := newGen(10, 1)
	data := filepath.Join(root, "day=1", "a.parquet")
	os.MkdirAll(filepath.Dir(data), 0o755)
	writePGo(t, data, g)
	sk1 := filepath.Join(root, "sk", "day=1.kgs")
	sk2 := filepath.Join(root, "sk", "day=2.kgs")
	os.MkdirAll(filepath.Dir(sk1), 0o755)
	for _, p := range []string{sk1, sk2} {
		if err := os.WriteFile(p, []byte("KGSKETCH and the rest"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	os.WriteFile(filepath.Join(root, "sk", "notes.txt"), []byte("KGSKETC"), 0o644) // too short
	opt := stream.DiscoverOptions{SketchMagic: "KGSKETCH"}
	cases := []struct {
		name     string
		patterns []string
		files    []string
		sketches []string
	}{
		{"Glob", []string{filepath.Join(root, "sk", "day=*.kgs")}, nil, []string{sk1, sk2}},
		{"Dir", []string{filepath.Join(root, "sk")}, nil, []string{sk1, sk2}},
		{"Named", []string{sk2}, nil, []string{sk2}},
		{"Mixed", []string{root}, []string{data}, []string{sk1, sk2}},
		{"Twice", []string{sk1, filepath.Join(root, "sk")}, nil, []string{sk1, sk2}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			d, err := stream.DiscoverWith(tc.patterns, opt)
			if err != nil {
				t.Fatal(err)
			}
			var files []string
			for _, f := range d.Files {
				files = append(files, f.Path)
			}
			if !slices.Equal(files, tc.files) || !slices.Equal(d.Sketches, tc.sketches) {
				t.Errorf("files %v sketches %v; want %v %v", files, d.Sketches, tc.files, tc.sketches)
			}
		})
	}
	// Without the option a directory of sketches holds no data files.
	if _, err := stream.DiscoverWith([]string{filepath.Join(root, "sk")}, stream.DiscoverOptions{}); !errors.Is(err, stream.ErrNoDataFiles) {
		t.Errorf("sketch folder without SketchMagic: %v, want ErrNoDataFiles", err)
	}
}
