package errtext

import (
	"errors"
	"fmt"
	"os"
	"testing"
)

// TestLine: package names are removed from messages, a file of such a name is kept, and the
// message is one line.
func TestLine(t *testing.T) {
	t.Chdir(t.TempDir())
	if err := os.WriteFile("model", nil, 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct{ in, want string }{
		{"sketch: cannot merge sketches of different columns", "cannot merge sketches of different columns"},
		{"a.kgs: sketch: corrupt sketch file: crc", "a.kgs: corrupt sketch file: crc"},
		{"criteria: max-k 9 is more than the rows; stream: x.parquet: bad", "max-k 9 is more than the rows; x.parquet: bad"},
		{"kgauge: stream: x.parquet: column \"a\": stream: unknown column", "x.parquet: column \"a\": unknown column"},
		{"model: not a Parquet or Arrow IPC file", "model: not a Parquet or Arrow IPC file"},
		{"lake/stream: x", "lake/stream: x"},
		{"two\nlines  here", "two lines here"},
		{"streaming: fine", "streaming: fine"},
	}
	for _, tc := range cases {
		if got := Line(tc.in); got != tc.want {
			t.Errorf("Line(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
	if got := Of(fmt.Errorf("x.arrow: %w", errors.New("stream: corrupt file"))); got != "x.arrow: corrupt file" {
		t.Errorf("Of = %q", got)
	}
	if Of(nil) != "" {
		t.Error("Of(nil) is not empty")
	}
}
