package synth

import (
	"errors"
	"slices"
	"testing"
)

func TestPlanPieces(t *testing.T) {
	for _, tc := range []struct {
		rows, rowGroup int
		want           []piece
	}{
		{10, 4, []piece{{0, 4, true}, {4, 4, true}, {8, 2, true}}},
		{5, 100, []piece{{0, 5, true}}},
		{maxPiece + 3, maxPiece + 1, []piece{{0, maxPiece, false}, {maxPiece, 1, true}, {maxPiece + 1, 2, true}}},
	} {
		if got := planPieces(tc.rows, tc.rowGroup); !slices.Equal(got, tc.want) {
			t.Errorf("planPieces(%d, %d) = %v, want %v", tc.rows, tc.rowGroup, got, tc.want)
		}
	}
}

func TestPipeline(t *testing.T) {
	pieces := planPieces(100, 1)
	newBuf := func() *int { return new(int) }
	gen := func(p piece, b *int) { *b = p.r0 * p.r0 }
	var got []int
	err := pipeline(pieces, newBuf, gen, func(p piece, b *int) error {
		if *b != p.r0*p.r0 {
			t.Fatalf("piece %d got the buffer of another piece (%d)", p.r0, *b)
		}
		got = append(got, p.r0)
		return nil
	})
	if err != nil || len(got) != 100 || !slices.IsSorted(got) {
		t.Fatalf("pipeline: err %v, %d pieces used in order %v", err, len(got), slices.IsSorted(got))
	}

	// A failing consumer stops the generator and its error is returned.
	stop := errors.New("disk full")
	generated := 0
	err = pipeline(pieces, newBuf, func(p piece, b *int) { generated++ }, func(p piece, b *int) error {
		if p.r0 == 3 {
			return stop
		}
		return nil
	})
	if !errors.Is(err, stop) {
		t.Fatalf("error %v, want %v", err, stop)
	}
	if generated > 4+pipelineDepth+1 {
		t.Errorf("generator ran %d pieces after the consumer failed at piece 3", generated)
	}
}
