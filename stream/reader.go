package stream

import (
	"errors"
	"fmt"
	"io"
	"sync"
)

// source is one unit's decoder: Parquet row group or Arrow record batches.
type source interface {
	// fill writes up to rows whole rows into dst (row-major, row width Dims),
	// sets bad[r] = 1 for rows with a null or NaN, and returns the number of
	// rows written; 0 means the unit is exhausted.
	fill(dst []float64, bad []uint8, rows int) (int, error)
	// fillColumns is fill by column: it sets cols[c] to the values of column c for up to rows rows,
	// either a view of the decoder's memory (valid until the next call) or scratch[c] (of capacity
	// at least rows) filled, and returns the number of rows.
	fillColumns(cols, scratch [][]float64, bad []uint8, rows int) (int, error)
	column(c int) string
	// decoding returns the column being decoded, or -1 between columns: a decoder panic is
	// reported against it.
	decoding() int
	close() error
}

// colError is a source failure in column col at row row of the fill call (-1
// when unknown).
type colError struct {
	col  int
	row  int64
	err  error
	name string // the column's name when it is not that of dimension col (a vector column)
}

func (e *colError) Error() string { return e.err.Error() }

// UnitReader reads the rows of one Unit. It is used by one goroutine.
type UnitReader struct {
	path     string
	unit     int
	d        int
	src      source
	fh       Handle
	rowBase  int64       // first row of the unit in the file (Parquet), or 0
	del      *rowDeletes // rows a lake table deleted, nil when none
	batchRow bool        // rows count from the start of the record batch
	row      int64       // rows consumed so far, skipped ones included
	skipped  int64
	nulls    []int64 // per column, nulls and NaNs among the skipped rows
	bad      []uint8
	cols     [][]float64 // ReadColumns: the columns returned
	scratch  [][]float64 // ReadColumns: per column, converted or compacted values
	columns  *sync.Pool  // the Dataset's pool of scratch sets, taken from and given back on Close
	err      error       // sticky: io.EOF or the first failure
}

// OpenUnit opens one unit for reading. It is safe to call from several
// goroutines at once; each UnitReader opens its own file handle.
func (d *Dataset) OpenUnit(u Unit) (r *UnitReader, err error) {
	if u.File < 0 || u.File >= len(d.Files) || d.files[u.File].pq == nil && d.files[u.File].arCols == nil {
		return nil, newError("", "", fmt.Errorf("no such unit (file %d, index %d) or dataset closed", u.File, u.Index))
	}
	f := d.Files[u.File]
	of := &d.files[u.File]
	defer func() {
		if p := recover(); p != nil {
			if r != nil && r.fh != nil {
				r.fh.Close()
			}
			r, err = nil, &ReadError{File: f.Path, Unit: u.Index, Row: -1, Err: panicError("opening the unit", p)}
		}
	}()
	fh, err := openPath(f.Path)
	if err != nil {
		return nil, &ReadError{File: f.Path, Unit: u.Index, Row: -1, Err: pathCause(err)}
	}
	r = &UnitReader{path: f.Path, unit: u.Index, d: d.Dims(), fh: fh, columns: d.columns}
	switch f.Format {
	case Parquet:
		r.src, err = d.openParquetUnit(of, u, fh)
		if err == nil {
			r.rowBase = of.rowBase[u.Index]
			r.del = newRowDeletes(f.Deleted, r.rowBase)
		}
	case ArrowFile:
		r.batchRow = true
		r.src, err = d.openArrowFileUnit(of, u, fh)
	case ArrowStream:
		r.src, err = d.openArrowStreamUnit(of, fh)
	default:
		err = fmt.Errorf("unknown format %d", f.Format)
	}
	if err != nil {
		fh.Close()
		var re *ReadError
		if errors.As(err, &re) {
			return nil, err
		}
		return nil, &ReadError{File: f.Path, Unit: u.Index, Row: -1, Err: err}
	}
	return r, nil
}

// Read fills dst (row-major; len(dst) must be a positive multiple of Dims())
// with up to len(dst)/Dims() whole rows and returns how many. At the end it
// returns io.EOF, possibly together with n > 0 rows; the caller uses the n
// rows before looking at the error. Rows with a null or NaN in a selected
// column are skipped and counted in Skipped. A +Inf or -Inf is a *ReadError
// wrapping ErrInfinite that names the file, column and row. Read does not
// allocate in steady state; the decoding libraries allocate per page or
// record batch. Panics from the decoding libraries are recovered into a
// *ReadError, after which the reader keeps returning that error.
func (r *UnitReader) Read(dst []float64) (n int, err error) {
	if r.err != nil {
		return 0, r.err
	}
	if len(dst) == 0 || len(dst)%r.d != 0 {
		return 0, fmt.Errorf("stream: Read: len(dst) = %d is not a positive multiple of Dims() = %d", len(dst), r.d)
	}
	defer func() {
		if p := recover(); p != nil {
			r.err = r.wrap(&colError{col: r.src.decoding(), row: -1, err: panicError("decoding", p)})
			n, err = 0, r.err
		}
	}()
	want := len(dst) / r.d
	if cap(r.bad) < want {
		r.bad = make([]uint8, want)
	}
	for {
		bad := r.bad[:want]
		clear(bad)
		m, ferr := r.src.fill(dst, bad, want)
		if ferr != nil {
			r.err = r.wrap(ferr)
			return 0, r.err
		}
		if m == 0 {
			r.err = io.EOF
			return 0, io.EOF
		}
		if r.nulls == nil {
			r.nulls = make([]int64, r.d)
		}
		del := r.del.mark(r.rowBase+r.row, bad[:m], func(i int) {
			for j, v := range dst[i*r.d : (i+1)*r.d] {
				if v != v { // compact counts it as a null again
					r.nulls[j]--
				}
			}
		})
		n = compact(dst[:m*r.d], bad[:m], r.d, r.nulls)
		r.skipped += int64(m - n - del)
		r.row += int64(m)
		if n > 0 {
			return n, nil
		}
	}
}

// takeColumns returns a set of per-column buffers for ReadColumns: one a closed reader of the same
// Dataset gave back, or a new one.
func (r *UnitReader) takeColumns() [][]float64 {
	if r.columns != nil {
		if sc, ok := r.columns.Get().(*[][]float64); ok && len(*sc) == r.d {
			return *sc
		}
	}
	return make([][]float64, r.d)
}

// ReadColumns reads up to max rows (max > 0) by column: cols[c] holds the values of the c-th selected
// column, all of the same length n > 0. The slices may alias the decoded pages or record batches
// (float64 columns without nulls are not copied), stay valid until the next call on r or Close, and
// must not be modified. At the end it returns nil and io.EOF. Rows are skipped, counted and
// reported as by Read, and a run of rows may be shorter than max wherever a page or record batch
// ends. ReadColumns and Read must not be mixed on one reader.
func (r *UnitReader) ReadColumns(max int) (cols [][]float64, err error) {
	if r.err != nil {
		return nil, r.err
	}
	if max <= 0 {
		return nil, fmt.Errorf("stream: ReadColumns: max = %d rows, want a positive number", max)
	}
	defer func() {
		if p := recover(); p != nil {
			r.err = r.wrap(&colError{col: r.src.decoding(), row: -1, err: panicError("decoding", p)})
			cols, err = nil, r.err
		}
	}()
	if r.cols == nil {
		r.cols, r.scratch = make([][]float64, r.d), r.takeColumns()
		r.nulls = make([]int64, r.d)
	}
	if cap(r.bad) < max {
		r.bad = make([]uint8, max)
	}
	for c := range r.scratch {
		if cap(r.scratch[c]) < max {
			r.scratch[c] = make([]float64, max)
		}
		r.scratch[c] = r.scratch[c][:max]
	}
	for {
		bad := r.bad[:max]
		clear(bad)
		m, ferr := r.src.fillColumns(r.cols, r.scratch, bad, max)
		if ferr != nil {
			r.err = r.wrap(ferr)
			return nil, r.err
		}
		if m == 0 {
			r.err = io.EOF
			return nil, io.EOF
		}
		del := r.del.mark(r.rowBase+r.row, bad[:m], func(i int) {
			for c, col := range r.cols {
				if col[i] != col[i] { // compactColumns counts it as a null again
					r.nulls[c]--
				}
			}
		})
		n := compactColumns(r.cols, r.scratch, bad[:m], r.nulls)
		r.skipped += int64(m - n - del)
		r.row += int64(m)
		if n > 0 {
			return r.cols, nil
		}
	}
}

// wrap turns a source error into a *ReadError.
func (r *UnitReader) wrap(err error) error {
	re := &ReadError{File: r.path, Unit: r.unit, Row: -1, Err: err, batchRow: r.batchRow}
	var ce *colError
	if errors.As(err, &ce) {
		re.Err = ce.err
		if ce.col >= 0 {
			re.Column = r.src.column(ce.col)
		}
		if ce.name != "" {
			re.Column = ce.name
		}
		if ce.row >= 0 {
			re.Row = r.rowBase + r.row + ce.row
		}
	}
	return re
}

// Skipped returns how many rows were left out so far because of a null or NaN. Rows a lake table
// deleted (File.Deleted) are left out without being counted.
func (r *UnitReader) Skipped() int64 { return r.skipped }

// SkippedByColumn returns, per selected column, how many of the skipped rows had a null or NaN
// there (a row may count in several columns). It returns nil before any row was skipped.
func (r *UnitReader) SkippedByColumn() []int64 { return r.nulls }

// Close releases the decoder's buffers and closes the file.
func (r *UnitReader) Close() error {
	if r.src == nil && r.fh == nil {
		return nil
	}
	if r.scratch != nil && r.columns != nil {
		sc := r.scratch
		r.columns.Put(&sc)
		r.cols, r.scratch = nil, nil
	}
	var err error
	if r.src != nil {
		err = r.src.close()
		r.src = nil
	}
	if r.fh != nil {
		if cerr := r.fh.Close(); err == nil {
			err = cerr
		}
		r.fh = nil
	}
	if r.err == nil {
		r.err = errors.New("stream: read after Close")
	}
	if err != nil {
		return &ReadError{File: r.path, Unit: r.unit, Row: -1, Err: err}
	}
	return nil
}
