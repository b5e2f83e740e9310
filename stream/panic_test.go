package stream

import (
	"errors"
	"strings"
	"testing"
)

// panicSource is a source whose decoder panics while decoding column at.
type panicSource struct {
	names []string
	at    int
	cur   int
}

func (s *panicSource) fill(dst []float64, bad []uint8, rows int) (int, error) {
	s.cur = s.at
	panic("index out of range [7] with length 3")
}

func (s *panicSource) fillColumns(cols, scratch [][]float64, bad []uint8, rows int) (int, error) {
	return s.fill(nil, bad, rows)
}
func (s *panicSource) column(c int) string { return s.names[c] }
func (s *panicSource) decoding() int       { return s.cur }
func (s *panicSource) close() error        { return nil }

// TestDecoderPanicNamesColumn: a panic inside a decoder becomes a *ReadError naming the file and the
// column being decoded (issue 14), through Read and ReadColumns alike; a panic between columns
// (an Arrow record batch decoded whole) names the file only.
func TestDecoderPanicNamesColumn(t *testing.T) {
	cases := []struct {
		name    string
		at      int
		column  string
		columns bool
	}{
		{"Read", 1, "load_kwh", false},
		{"ReadColumns", 0, "meter", true},
		{"BetweenColumns", -1, "", false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			src := &panicSource{names: []string{"meter", "load_kwh"}, at: tc.at, cur: -1}
			r := &UnitReader{path: "lake/day=1/part-0.parquet", unit: 2, d: 2, src: src}
			var err error
			if tc.columns {
				_, err = r.ReadColumns(8)
			} else {
				_, err = r.Read(make([]float64, 16))
			}
			var re *ReadError
			if !errors.As(err, &re) {
				t.Fatalf("error %v is not a *ReadError", err)
			}
			msg := err.Error()
			if re.File != r.path || !strings.Contains(msg, r.path) || re.Column != tc.column {
				t.Errorf("error %q: file %q column %q; want file %q column %q", msg, re.File, re.Column, r.path, tc.column)
			}
			if tc.column != "" && !strings.Contains(msg, `column "`+tc.column+`"`) {
				t.Errorf("error %q does not name column %q", msg, tc.column)
			}
			if _, again := r.Read(make([]float64, 16)); again == nil || again.Error() != msg {
				t.Errorf("the reader did not keep its error: %v", again)
			}
		})
	}
}

// TestParquetDecoderPanicNamesColumn: the same through the Parquet source itself, whose column
// cursor panics (a nil page reader stands in for a decoder that panics).
func TestParquetDecoderPanicNamesColumn(t *testing.T) {
	for _, columns := range []bool{false, true} {
		src := &pqSource{cols: []pqCursor{{plan: pqColumn{out: 0}}, {plan: pqColumn{out: 1}}},
			names: []string{"meter", "load_kwh"}, remaining: 10, at: -1}
		r := &UnitReader{path: "part-0.parquet", d: 2, src: src}
		var err error
		if columns {
			_, err = r.ReadColumns(4)
		} else {
			_, err = r.Read(make([]float64, 8))
		}
		var re *ReadError
		if !errors.As(err, &re) || re.Column != "meter" || !strings.Contains(err.Error(), `column "meter"`) {
			t.Errorf("ReadColumns %v: error %v; want one naming column meter", columns, err)
		}
	}
}
