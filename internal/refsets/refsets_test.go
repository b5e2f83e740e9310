package refsets

import (
	"os"
	"path/filepath"
	"testing"
)

// TestRead checks the point counts and dimensions stated in the data sets' provenance notes
// (testdata/refsets/README.md, from the published descriptions of the sets).
func TestRead(t *testing.T) {
	for _, tc := range []struct {
		file string
		n, d int
	}{
		{"ruspini.csv", 75, 2},
		{"s1.txt", 5000, 2},
		{"s2.txt", 5000, 2},
		{"a1.txt", 3000, 2},
		{"dim032.txt", 1024, 32},
		{"dim064.txt", 1024, 64},
	} {
		x, d, err := Read(filepath.Join("..", "..", "testdata", "refsets", tc.file))
		if err != nil {
			t.Fatal(err)
		}
		if d != tc.d || len(x) != tc.n*tc.d {
			t.Errorf("%s: %d × %d, want %d × %d", tc.file, len(x)/max(d, 1), d, tc.n, tc.d)
		}
	}
}

func TestReadBad(t *testing.T) {
	dir := t.TempDir()
	for name, body := range map[string]string{
		"empty":   "# only a comment\n\n",
		"text":    "1,2\n3,x\n",
		"ragged":  "1 2\n3 4\n5\n",
		"missing": "",
	} {
		path := filepath.Join(dir, name)
		if name != "missing" {
			os.WriteFile(path, []byte(body), 0o644)
		}
		if _, _, err := Read(path); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
	path := filepath.Join(dir, "header")
	os.WriteFile(path, []byte("3 2 0\n1 2\n3,4\n5 6\n"), 0o644)
	if x, d, err := Read(path); err != nil || d != 2 || len(x) != 6 || x[2] != 3 {
		t.Errorf("header file: %v %d %v", x, d, err)
	}
}
