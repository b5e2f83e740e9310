package stream

import (
	"errors"
	"fmt"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/ipc"
)

// arrowColumn is the reading plan for one selected Arrow column.
type arrowColumn struct {
	name  string
	id    arrow.Type
	scale int32 // decimals
	out   int   // first dimension of the row it fills
	width int   // vector columns: the length of every list; 0 for a scalar column
}

func (d *Dataset) openArrow(i int, fh Handle, f Format) ([]colInfo, error) {
	path := d.Files[i].Path
	var schema *arrow.Schema
	if err := checkArrow(fh, f, -1); err != nil {
		return nil, newError(path, "", err)
	}
	mem := newBoundedAllocator(d.Files[i].Size)
	if f == ArrowFile {
		fr, err := ipc.NewFileReader(fh, ipc.WithAllocator(mem))
		if err != nil {
			return nil, newError(path, "", err)
		}
		schema = fr.Schema()
		d.files[i].batches = fr.NumRecords()
		fr.Close()
	} else {
		rd, err := ipc.NewReader(fh, ipc.WithAllocator(mem))
		if err != nil {
			return nil, newError(path, "", err)
		}
		schema = rd.Schema()
		rd.Release()
	}
	cols := make([]colInfo, 0, schema.NumFields())
	for _, fd := range schema.Fields() {
		cols = append(cols, classifyArrow(fd))
	}
	return cols, nil
}

// classifyArrow decides whether an Arrow field is numeric.
func classifyArrow(fd arrow.Field) colInfo {
	ci := colInfo{name: fd.Name, typ: fd.Type.String(), ar: arrowColumn{name: fd.Name, id: fd.Type.ID()}}
	switch t := fd.Type.(type) {
	case *arrow.Decimal128Type:
		ci.ar.scale = t.Scale
		return ci
	case *arrow.Decimal256Type:
		ci.ar.scale = t.Scale
		return ci
	}
	switch fd.Type.ID() {
	case arrow.INT8, arrow.INT16, arrow.INT32, arrow.INT64,
		arrow.UINT8, arrow.UINT16, arrow.UINT32, arrow.UINT64,
		arrow.FLOAT16, arrow.FLOAT32, arrow.FLOAT64:
	case arrow.DATE32, arrow.DATE64, arrow.TIMESTAMP, arrow.TIME32, arrow.TIME64,
		arrow.DURATION, arrow.INTERVAL_MONTHS, arrow.INTERVAL_DAY_TIME, arrow.INTERVAL_MONTH_DAY_NANO:
		ci.reason = "temporal"
	case arrow.LIST, arrow.LARGE_LIST, arrow.FIXED_SIZE_LIST:
		if lt, ok := fd.Type.(arrow.ListLikeType); ok {
			if e := lt.Elem().ID(); e == arrow.FLOAT32 || e == arrow.FLOAT64 {
				ci.vector = true
				return ci
			}
		}
		ci.reason, ci.nonRoot = "nested", true
	case arrow.LIST_VIEW, arrow.LARGE_LIST_VIEW,
		arrow.STRUCT, arrow.MAP, arrow.SPARSE_UNION, arrow.DENSE_UNION, arrow.RUN_END_ENCODED:
		ci.reason, ci.nonRoot = "nested", true
	case arrow.DICTIONARY:
		ci.reason = "dictionary-encoded (not supported)"
	case arrow.NULL:
		ci.reason = "always null"
	case arrow.EXTENSION:
		ci.reason = "extension type (not supported)"
	default:
		ci.reason = "not numeric"
	}
	return ci
}

// arrowSource reads one Arrow IPC-file record batch or a whole IPC stream.
type arrowSource struct {
	cols    []arrowColumn
	names   []string // name of each dimension of a row
	field   []int    // field index of each selected column in the unit's schema
	scratch [][]float64
	at      int // the column being converted, -1 between columns

	rec  arrow.Record // current record (owned when from a file)
	pos  int          // next row of rec
	rd   *ipc.Reader  // stream reader, nil for a file unit
	done bool

	block []float64 // vectorColumns: transposeRows rows of a vector column
}

// resolve maps the selected columns to field indexes of schema and checks
// their types did not change since Open.
func (s *arrowSource) resolve(schema *arrow.Schema) error {
	s.field = make([]int, len(s.cols))
	s.scratch = make([][]float64, len(s.cols))
	for c, col := range s.cols {
		idx := schema.FieldIndices(col.name)
		if len(idx) == 0 {
			return &colError{col: c, row: -1, err: ErrMissingColumn}
		}
		if got := schema.Field(idx[0]).Type.ID(); got != col.id {
			return &colError{col: c, row: -1, err: fmt.Errorf("type changed since Open: %s", schema.Field(idx[0]).Type)}
		}
		s.field[c] = idx[0]
	}
	return nil
}

// checkArrow checks the framing of an Arrow IPC file or stream (see guard.go)
// before arrow's readers see it.
// For a file, unit selects the record batch to check (-1: all of them).
func checkArrow(fh Handle, f Format, unit int) error {
	size, err := fileSize(fh)
	if err != nil {
		return err
	}
	if f == ArrowFile {
		return checkArrowFile(fh, size, unit)
	}
	return checkIPCStream(fh, 0, size)
}

func (d *Dataset) openArrowFileUnit(of *openFile, u Unit, fh Handle) (*arrowSource, error) {
	if err := checkArrow(fh, ArrowFile, u.Index); err != nil {
		return nil, err
	}
	size, err := fileSize(fh)
	if err != nil {
		return nil, err
	}
	fr, err := ipc.NewFileReader(fh, ipc.WithAllocator(newBoundedAllocator(size)))
	if err != nil {
		return nil, err
	}
	defer fr.Close()
	if u.Index < 0 || u.Index >= fr.NumRecords() {
		return nil, fmt.Errorf("no record batch %d", u.Index)
	}
	s := &arrowSource{cols: of.arCols, names: d.Columns, at: -1}
	if err := s.resolve(fr.Schema()); err != nil {
		return nil, s.named(err)
	}
	rec, err := fr.RecordAt(u.Index)
	if err != nil {
		return nil, err
	}
	s.rec = rec
	return s, nil
}

func (d *Dataset) openArrowStreamUnit(of *openFile, fh Handle) (*arrowSource, error) {
	if err := checkArrow(fh, ArrowStream, 0); err != nil {
		return nil, err
	}
	size, err := fileSize(fh)
	if err != nil {
		return nil, err
	}
	rd, err := ipc.NewReader(fh, ipc.WithAllocator(newBoundedAllocator(size)))
	if err != nil {
		return nil, err
	}
	s := &arrowSource{cols: of.arCols, names: d.Columns, rd: rd, at: -1}
	if err := s.resolve(rd.Schema()); err != nil {
		rd.Release()
		return nil, s.named(err)
	}
	return s, nil
}

// named turns a colError from resolve into a *ReadError with the column name
// (the caller fills in the file).
func (s *arrowSource) named(err error) error {
	var ce *colError
	if errors.As(err, &ce) {
		return &ReadError{Unit: -1, Row: -1, Column: s.cols[ce.col].name, Err: ce.err}
	}
	return err
}

func (s *arrowSource) column(c int) string { return s.names[c] }

func (s *arrowSource) decoding() int { return s.at }

// advance makes s.rec a record with rows left, or sets done.
func (s *arrowSource) advance() error {
	for !s.done && (s.rec == nil || s.pos >= int(s.rec.NumRows())) {
		if s.rd == nil {
			if s.rec != nil {
				s.rec.Release()
				s.rec = nil
			}
			s.done = true
			break
		}
		s.rec = nil // owned by the reader, released by Next
		if !s.rd.Next() {
			s.done = true
			return s.rd.Err()
		}
		s.rec, s.pos = s.rd.Record(), 0
	}
	return nil
}

func (s *arrowSource) fill(dst []float64, bad []uint8, rows int) (int, error) {
	s.at = -1 // a record batch is decoded whole; set per column below
	if err := s.advance(); err != nil {
		return 0, err
	}
	if s.done {
		return 0, nil
	}
	m := min(rows, int(s.rec.NumRows())-s.pos)
	d := len(s.names)
	for c, col := range s.cols {
		s.at = col.out
		arr := s.rec.Column(s.field[c])
		if col.width > 0 {
			v, err := newArrowVector(col, arr)
			if err == nil {
				err = v.rows(s.pos, m, bad, func(r int) []float64 { return dst[r*d+col.out : r*d+col.out+col.width] })
			}
			if err != nil {
				return 0, err
			}
			continue
		}
		if inf := s.put(c, arr, dst, col.out, d, s.pos, m, bad[:m]); inf >= 0 {
			return 0, &colError{col: col.out, row: int64(inf), err: ErrInfinite}
		}
	}
	s.pos += m
	return m, nil
}

func (s *arrowSource) fillColumns(cols, scratch [][]float64, bad []uint8, rows int) (int, error) {
	s.at = -1 // a record batch is decoded whole; set per column below
	if err := s.advance(); err != nil {
		return 0, err
	}
	if s.done {
		return 0, nil
	}
	m := min(rows, int(s.rec.NumRows())-s.pos)
	for c, col := range s.cols {
		s.at = col.out
		arr := s.rec.Column(s.field[c])
		o := col.out
		if col.width > 0 {
			out := cols[o : o+col.width]
			for j := range out {
				out[j] = scratch[o+j][:m]
			}
			if err := s.vectorColumns(col, arr, out, bad, m); err != nil {
				return 0, err
			}
			continue
		}
		var inf int
		if a, ok := arr.(*array.Float64); ok && arr.NullN() == 0 {
			inf = viewDense(&cols[o], a.Float64Values()[s.pos:s.pos+m], bad)
		} else {
			cols[o] = scratch[o][:m]
			inf = s.put(c, arr, cols[o], 0, 1, s.pos, m, bad[:m])
		}
		if inf >= 0 {
			return 0, &colError{col: o, row: int64(inf), err: ErrInfinite}
		}
	}
	s.pos += m
	return m, nil
}

// vectorColumns copies the next m rows of the vector column col (array arr) into out, one slice
// per value of a row, transposeRows rows at a time (see transposeRows).
func (s *arrowSource) vectorColumns(col arrowColumn, arr arrow.Array, out [][]float64, bad []uint8, m int) error {
	v, err := newArrowVector(col, arr)
	if err != nil {
		return err
	}
	w := col.width
	if cap(s.block) < transposeRows*w {
		s.block = make([]float64, transposeRows*w)
	}
	block := s.block[:transposeRows*w]
	for r0 := 0; r0 < m; r0 += transposeRows {
		n := min(transposeRows, m-r0)
		err := v.rows(s.pos+r0, n, bad[r0:], func(b int) []float64 { return block[b*w : (b+1)*w] })
		if err != nil {
			var ce *colError
			if errors.As(err, &ce) && ce.row >= 0 {
				ce.row += int64(r0) // rows count from the batch's first
			}
			return err
		}
		transposeInto(out, r0, block, w, n)
	}
	return nil
}

// put copies rows [p, p+m) of arr to dst[o], dst[o+d], ...
func (s *arrowSource) put(c int, arr arrow.Array, dst []float64, o, d, p, m int, bad []uint8) int {
	switch a := arr.(type) {
	case *array.Float64:
		return putArrow(dst, o, d, a.Float64Values()[p:p+m], arr, p, bad)
	case *array.Float32:
		return putArrow(dst, o, d, a.Float32Values()[p:p+m], arr, p, bad)
	case *array.Int64:
		return putArrow(dst, o, d, a.Int64Values()[p:p+m], arr, p, bad)
	case *array.Int32:
		return putArrow(dst, o, d, a.Int32Values()[p:p+m], arr, p, bad)
	case *array.Int16:
		return putArrow(dst, o, d, a.Int16Values()[p:p+m], arr, p, bad)
	case *array.Int8:
		return putArrow(dst, o, d, a.Int8Values()[p:p+m], arr, p, bad)
	case *array.Uint64:
		return putArrow(dst, o, d, a.Uint64Values()[p:p+m], arr, p, bad)
	case *array.Uint32:
		return putArrow(dst, o, d, a.Uint32Values()[p:p+m], arr, p, bad)
	case *array.Uint16:
		return putArrow(dst, o, d, a.Uint16Values()[p:p+m], arr, p, bad)
	case *array.Uint8:
		return putArrow(dst, o, d, a.Uint8Values()[p:p+m], arr, p, bad)
	case *array.Float16:
		buf := s.scratch[c][:0]
		for _, v := range a.Values()[p : p+m] {
			buf = append(buf, float64(v.Float32()))
		}
		s.scratch[c] = buf
		return putArrow(dst, o, d, buf, arr, p, bad)
	case *array.Decimal128:
		buf, scale := s.scratch[c][:0], s.cols[c].scale
		for _, v := range a.Values()[p : p+m] {
			buf = append(buf, v.ToFloat64(scale))
		}
		s.scratch[c] = buf
		return putArrow(dst, o, d, buf, arr, p, bad)
	case *array.Decimal256:
		buf, scale := s.scratch[c][:0], s.cols[c].scale
		for _, v := range a.Values()[p : p+m] {
			buf = append(buf, v.ToFloat64(scale))
		}
		s.scratch[c] = buf
		return putArrow(dst, o, d, buf, arr, p, bad)
	}
	panic(fmt.Sprintf("unexpected Arrow array %T", arr))
}

// putArrow copies src, the rows [p, p+len(src)) of arr, honouring the
// validity bitmap.
func putArrow[T number](dst []float64, o, d int, src []T, arr arrow.Array, p int, bad []uint8) int {
	if arr.NullN() == 0 {
		return putDense(dst, o, d, src, bad)
	}
	return putMasked(dst, o, d, src, arr.NullBitmapBytes(), arr.Data().Offset()+p, bad)
}

func (s *arrowSource) close() error {
	if s.rd != nil {
		s.rd.Release()
		s.rd = nil
		s.rec = nil
	}
	if s.rec != nil {
		s.rec.Release()
		s.rec = nil
	}
	return nil
}
