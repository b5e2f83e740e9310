// Package refsets reads the plain-text reference point sets of testdata/refsets (published data
// sets with a known number of clusters; see testdata/refsets/README.md for their sources).
package refsets

import (
	"bufio"
	"fmt"
	"os"
	"strconv"
	"strings"
)

// Read reads a point set: one point a line, numbers separated by white space or commas; blank
// lines and lines starting with '#' are skipped, and a first line whose field count differs from
// the second line's (the "n d 0" header of the S, A and DIM sets) is a header. It returns the
// points row-major and their dimension.
func Read(path string) (x []float64, d int, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, 0, err
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
		for j, s := range fields {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				return nil, 0, fmt.Errorf("%s line %d: %q is not a number", path, line, s)
			}
			row[j] = v
		}
		rows = append(rows, row)
	}
	if err := sc.Err(); err != nil {
		return nil, 0, fmt.Errorf("%s: %w", path, err)
	}
	if len(rows) >= 2 && len(rows[0]) != len(rows[1]) {
		rows = rows[1:]
	}
	if len(rows) == 0 {
		return nil, 0, fmt.Errorf("%s holds no points", path)
	}
	d = len(rows[0])
	x = make([]float64, 0, len(rows)*d)
	for i, r := range rows {
		if len(r) != d {
			return nil, 0, fmt.Errorf("%s: point %d has %d values, want %d", path, i+1, len(r), d)
		}
		x = append(x, r...)
	}
	return x, d, nil
}
