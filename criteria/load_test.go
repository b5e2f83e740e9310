package criteria_test

import (
	"bufio"
	"fmt"
	"os"
	"strconv"
	"strings"
	"testing"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// loadPoints reads a small text point set: an optional header line "n d 0" (three integers whose
// second equals the number of columns that follow), blank and '#' lines skipped, values separated
// by whitespace or commas.
func loadPoints(path string) (kmeans.Data, error) {
	f, err := os.Open(path)
	if err != nil {
		return kmeans.Data{}, err
	}
	defer f.Close()
	var rows [][]float64
	sc := bufio.NewScanner(f)
	line := 0
	for sc.Scan() {
		line++
		t := strings.TrimSpace(sc.Text())
		if t == "" || strings.HasPrefix(t, "#") {
			continue
		}
		fields := strings.FieldsFunc(t, func(r rune) bool { return r == ',' || r == ' ' || r == '\t' })
		row := make([]float64, len(fields))
		for i, s := range fields {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				return kmeans.Data{}, fmt.Errorf("%s:%d: %v", path, line, err)
			}
			row[i] = v
		}
		rows = append(rows, row)
	}
	if err := sc.Err(); err != nil {
		return kmeans.Data{}, err
	}
	if len(rows) == 0 {
		return kmeans.Data{}, fmt.Errorf("%s: no points", path)
	}
	// Header "n d 0": three values, the second the width of the data rows, the first their count.
	if h := rows[0]; len(h) == 3 && len(rows) > 1 && int(h[1]) == len(rows[1]) && int(h[0]) == len(rows)-1 && h[2] == 0 {
		rows = rows[1:]
	}
	d := len(rows[0])
	x := make([]float64, 0, len(rows)*d)
	for i, r := range rows {
		if len(r) != d {
			return kmeans.Data{}, fmt.Errorf("%s: row %d has %d values, want %d", path, i+1, len(r), d)
		}
		x = append(x, r...)
	}
	return kmeans.Data{X: x, D: d}, nil
}

func mustLoad(t testing.TB, path string) kmeans.Data {
	t.Helper()
	p, err := loadPoints(path)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func TestLoadPoints(t *testing.T) {
	tests := []struct {
		file string
		n, d int
	}{
		{"../testdata/refsets/ruspini.csv", 75, 2},
		{"../testdata/refsets/s1.txt", 5000, 2},
		{"../testdata/refsets/s2.txt", 5000, 2},
		{"../testdata/refsets/a1.txt", 3000, 2},
		{"../testdata/refsets/dim032.txt", 1024, 32},
		{"../testdata/refsets/dim064.txt", 1024, 64},
	}
	for _, tc := range tests {
		p := mustLoad(t, tc.file)
		if p.Len() != tc.n || p.D != tc.d {
			t.Errorf("%s: %d x %d, want %d x %d (counts from /work/shared/data/README.md)", tc.file, p.Len(), p.D, tc.n, tc.d)
		}
	}
}
