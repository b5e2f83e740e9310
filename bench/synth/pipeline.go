package synth

import "sync"

// maxPiece is the most rows generated in one piece: row groups larger than this are
// assembled from several pieces, so memory stays bounded whatever RowGroup is.
const maxPiece = 1 << 15

// piece is a run of rows generated at once; last marks the end of a row group.
type piece struct {
	r0, n int
	last  bool
}

// planPieces splits rows into row groups of rowGroup rows, and those into pieces of at
// most maxPiece rows.
func planPieces(rows, rowGroup int) []piece {
	var out []piece
	for g0 := 0; g0 < rows; g0 += rowGroup {
		end := min(rows, g0+rowGroup)
		for r0 := g0; r0 < end; r0 += maxPiece {
			n := min(maxPiece, end-r0)
			out = append(out, piece{r0: r0, n: n, last: r0+n == end})
		}
	}
	return out
}

// pipelineDepth is how many pieces generation may run ahead of writing.
const pipelineDepth = 2

// pipeline generates the pieces in order on one goroutine, up to pipelineDepth pieces
// ahead of use, which it calls in order on the caller's goroutine. Buffers (made by
// newBuf) are recycled, and the output is the same as generating and using each piece
// in turn. If use fails, generation stops and the error is returned.
func pipeline[T any](pieces []piece, newBuf func() T, gen func(p piece, buf T), use func(p piece, buf T) error) error {
	free := make(chan T, pipelineDepth+1)
	full := make(chan T, pipelineDepth)
	done := make(chan struct{})
	for range pipelineDepth + 1 {
		free <- newBuf()
	}
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(full)
		for _, p := range pieces {
			var b T
			select {
			case b = <-free:
			case <-done:
				return
			}
			gen(p, b)
			select {
			case full <- b:
			case <-done:
				return
			}
		}
	}()
	defer func() {
		close(done)
		wg.Wait()
	}()
	i := 0
	for b := range full {
		if err := use(pieces[i], b); err != nil {
			return err
		}
		free <- b // never blocks: free holds every buffer
		i++
	}
	return nil
}
