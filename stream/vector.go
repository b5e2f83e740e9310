package stream

import (
	"errors"
	"fmt"
	"io"

	"github.com/apache/arrow/go/v17/arrow"
	"github.com/apache/arrow/go/v17/arrow/array"
	"github.com/apache/arrow/go/v17/arrow/ipc"
	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/format"
)

// Vector columns. A list of float32 or float64 whose rows all hold the same number of values (an
// embedding, a load curve stored as one array) is one feature of that length: it becomes that many
// dimensions, named "col[0]", "col[1]", and so on. Vector columns are read only when named in
// Options.Columns (a 768-value embedding would otherwise swamp the scalar columns of a table). A null
// list, an empty list or a null element makes the row a null row (skipped and counted); a list of
// another length is a *ReadError wrapping ErrVectorLength that names the file, column and row.

// ErrVectorLength is wrapped by the error for a row whose list does not have the column's length.
var ErrVectorLength = errors.New("stream: list length differs from the column's")

// maxVectorWidth bounds the length of one vector column (the sketch bounds the total width).
const maxVectorWidth = 1 << 16

// vectorName is the name of dimension j of vector column name.
func vectorName(name string, j int) string { return fmt.Sprintf("%s[%d]", name, j) }

// classifyParquetList recognises a top-level Parquet list of float32 or float64 starting at
// schema[i]: the three-level LIST form (group (LIST) { repeated group { element } }), the legacy
// two-level form (group (LIST) { repeated element }) and a bare repeated leaf. It returns the
// column's plan (leaf left for the caller) and false when schema[i] is not such a list.
func classifyParquetList(schema []format.SchemaElement, i int) (colInfo, bool) {
	def := func(e *format.SchemaElement) byte {
		if e.RepetitionType.Valid && e.RepetitionType.V != format.Required {
			return 1
		}
		return 0
	}
	repeated := func(e *format.SchemaElement) bool {
		return e.RepetitionType.Valid && e.RepetitionType.V == format.Repeated
	}
	leafOf := func(e *format.SchemaElement) bool { return !e.NumChildren.Valid || e.NumChildren.V <= 0 }
	top := &schema[i]
	var leaf *format.SchemaElement
	var defRep, maxDef byte
	switch {
	case leafOf(top) && repeated(top): // bare repeated leaf
		leaf, defRep, maxDef = top, 1, 1
	case !leafOf(top) && top.NumChildren.V == 1 && groupTypeName(top) == "list" && i+1 < len(schema):
		mid := &schema[i+1]
		if !repeated(mid) {
			return colInfo{}, false
		}
		defRep = def(top) + 1
		if leafOf(mid) { // two-level
			leaf, maxDef = mid, defRep
			break
		}
		if mid.NumChildren.V != 1 || i+2 >= len(schema) || !leafOf(&schema[i+2]) || repeated(&schema[i+2]) {
			return colInfo{}, false
		}
		leaf = &schema[i+2]
		maxDef = defRep + def(leaf)
	default:
		return colInfo{}, false
	}
	elem := classifyParquet(leaf)
	if elem.reason != "" || (elem.pq.kind != kF64 && elem.pq.kind != kF32) {
		return colInfo{}, false
	}
	return colInfo{
		name:   top.Name,
		typ:    "list<" + elem.typ + ">",
		vector: true,
		pq:     pqColumn{kind: elem.pq.kind, maxDef: maxDef, defRep: defRep, maxRep: 1},
	}, true
}

// pqVector walks the pages of one Parquet list column, a row at a time.
type pqVector struct {
	plan  pqColumn
	pages *parquet.FilePages

	page       parquet.Page
	reps, defs []byte
	lvl        int // next level of the page
	vals       []float64
	idx        []int32
	vpos       int // next packed non-null value
	done       bool

	dict    parquet.Dictionary
	dictF64 []float64
	scratch []float64
	buf     []float64 // the row's values, len plan.width (nil while peeking)
	block   []float64 // fillColumns: transposeRows rows of buf
}

// next loads the next page holding levels; it returns io.EOF at the end of the column chunk.
func (v *pqVector) next() error {
	for {
		if v.page != nil {
			parquet.Release(v.page)
			v.page, v.reps, v.defs, v.vals, v.idx = nil, nil, nil, nil, nil
		}
		if v.done {
			return io.EOF
		}
		page, err := v.pages.ReadPage()
		if err == io.EOF {
			v.done = true
		}
		if err != nil {
			return err
		}
		v.page = page
		v.reps, v.defs = page.RepetitionLevels(), page.DefinitionLevels()
		if len(v.reps) != len(v.defs) {
			return corruptf("page has %d repetition and %d definition levels", len(v.reps), len(v.defs))
		}
		if len(v.defs) == 0 {
			continue
		}
		nonNull := 0
		for _, d := range v.defs {
			if d == v.plan.maxDef {
				nonNull++
			}
		}
		data, have := page.Data(), 0
		if dict := page.Dictionary(); dict != nil {
			v.idx = data.Int32()
			have = len(v.idx)
			if dict != v.dict {
				v.dictF64 = convert(v.plan, dict.Page().Data(), v.dictF64[:0])
				v.dict = dict
			}
		} else {
			v.scratch = convert(v.plan, data, v.scratch[:0])
			v.vals = v.scratch
			if v.plan.kind == kF64 {
				v.vals = data.Double()
			}
			have = len(v.vals)
		}
		if have < nonNull {
			return corruptf("page holds %d values for %d non-null list elements", have, nonNull)
		}
		v.lvl, v.vpos = 0, 0
		return nil
	}
}

// value returns the next packed non-null value of the page.
func (v *pqVector) value() (float64, error) {
	p := v.vpos
	v.vpos++
	if v.idx == nil {
		return v.vals[p], nil
	}
	if i := v.idx[p]; i >= 0 && int(i) < len(v.dictF64) {
		return v.dictF64[i], nil
	}
	return 0, corruptf("dictionary index %d out of range (%d entries)", v.idx[p], len(v.dictF64))
}

// row reads the next row. It returns the number of list entries (null elements included), whether
// the row is null (a null or empty list, or a null element), and io.EOF when the chunk holds no more
// rows. The first len(v.buf) values are stored in v.buf.
func (v *pqVector) row() (n int, null bool, err error) {
	if v.page == nil || v.lvl == len(v.defs) {
		if err := v.next(); err != nil {
			return 0, false, err
		}
	}
	if v.reps[v.lvl] != 0 {
		return 0, false, corruptf("a list continues where a row should start")
	}
	for {
		switch d := v.defs[v.lvl]; {
		case d == v.plan.maxDef:
			x, err := v.value()
			if err != nil {
				return 0, false, err
			}
			if n < len(v.buf) {
				v.buf[n] = x
			}
			n++
		case d >= v.plan.defRep:
			if n < len(v.buf) {
				v.buf[n] = nan
			}
			null = true
			n++
		default: // a null or empty list: one level, no entries
			null = true
		}
		v.lvl++
		if v.lvl == len(v.defs) {
			switch err := v.next(); {
			case err == io.EOF:
				return n, null || n == 0, nil
			case err != nil:
				return 0, false, err
			}
		}
		if v.reps[v.lvl] == 0 {
			return n, null || n == 0, nil
		}
	}
}

// readRow reads the next row into v.buf (len plan.width): a null row is all NaN. It returns the
// index within the row of the first ±Inf (or -1), and an error for a row of another length.
func (v *pqVector) readRow() (bad bool, inf int, err error) {
	n, null, err := v.row()
	if err == io.EOF {
		return false, -1, errors.New("column chunk holds fewer rows than its row group")
	}
	if err != nil {
		return false, -1, err
	}
	if n != v.plan.width && n > 0 {
		return false, -1, fmt.Errorf("%w: a list of %d values, where the column's lists hold %d", ErrVectorLength, n, v.plan.width)
	}
	if null {
		for j := range v.buf {
			v.buf[j] = nan
		}
		return true, -1, nil
	}
	for j, x := range v.buf {
		if x-x != 0 {
			if x != x {
				bad = true
			} else {
				return false, j, nil
			}
		}
	}
	return bad, -1, nil
}

// fillRow reads the next row into v.buf, marks bad[r] for a null row and returns a *colError for a
// row of another length or a ±Inf value.
func (v *pqVector) fillRow(bad []uint8, r int) error {
	isBad, inf, err := v.readRow()
	switch {
	case err != nil:
		return &colError{col: v.plan.out, row: int64(r), err: err, name: v.plan.name}
	case inf >= 0:
		return &colError{col: v.plan.out + inf, row: int64(r), err: ErrInfinite}
	case isBad:
		bad[r] = 1
	}
	return nil
}

// transposeRows is how many rows pqVector.fillColumns reads before it writes them into the
// columns: one 64-byte line of float64 in each column, so that writing a row's values, one to each
// of many columns, does not touch a line per value.
const transposeRows = 8

// fillColumns reads the next m rows into out (one slice of at least m values per value of a row),
// as fillRow would one by one, transposeRows rows at a time.
func (v *pqVector) fillColumns(out [][]float64, bad []uint8, m int) error {
	w := v.plan.width
	if cap(v.block) < transposeRows*w {
		v.block = make([]float64, transposeRows*w)
	}
	block := v.block[:transposeRows*w]
	for r0 := 0; r0 < m; r0 += transposeRows {
		n := min(transposeRows, m-r0)
		for b := range n {
			if err := v.fillRow(bad, r0+b); err != nil {
				return err
			}
			copy(block[b*w:(b+1)*w], v.buf)
		}
		transposeInto(out, r0, block, w, n)
	}
	return nil
}

func (v *pqVector) close() error {
	if v.page != nil {
		parquet.Release(v.page)
		v.page = nil
	}
	if v.pages != nil {
		err := v.pages.Close()
		v.pages = nil
		return err
	}
	return nil
}

// parquetVectorWidth returns the length of the first non-null, non-empty list of column plan in
// file i, reading as few pages as it can.
func (d *Dataset) parquetVectorWidth(i int, plan pqColumn) (width int, err error) {
	of := &d.files[i]
	fh, err := openPath(d.Files[i].Path)
	if err != nil {
		return 0, pathCause(err)
	}
	defer fh.Close()
	size, err := fileSize(fh)
	if err != nil {
		return 0, err
	}
	meta := of.pq.Metadata().RowGroups
	for g, rg := range of.pq.RowGroups() {
		if g >= len(meta) || plan.leaf >= len(meta[g].Columns) {
			return 0, corruptf("row group %d has no column chunk %d", g, plan.leaf)
		}
		cm := &meta[g].Columns[plan.leaf].MetaData
		start := cm.DataPageOffset
		if cm.DictionaryPageOffset != 0 {
			start = cm.DictionaryPageOffset
		}
		if err := checkColumnChunk(fh, start, cm.TotalCompressedSize, min(of.footerAt, size), rg.NumRows(),
			chunkShape{codec: cm.Codec, maxDef: plan.maxDef, maxRep: plan.maxRep}); err != nil {
			return 0, fmt.Errorf("row group %d: %w", g, err)
		}
		fc, ok := rg.ColumnChunks()[plan.leaf].(*parquet.FileColumnChunk)
		if !ok {
			return 0, fmt.Errorf("column chunk %d is not a file column chunk", plan.leaf)
		}
		pages := fc.PagesFrom(fh)
		if isLZ4(of.pq, g, plan.leaf) {
			if pages, err = openLZ4Chunk(of.pq, fh, g, plan.leaf); err != nil {
				return 0, fmt.Errorf("row group %d: %w", g, err)
			}
		}
		v := &pqVector{plan: plan, pages: pages}
		for {
			n, _, err := v.row()
			if err == io.EOF {
				break
			}
			if err != nil {
				v.close()
				return 0, err
			}
			if n > 0 {
				v.close()
				if n > maxVectorWidth {
					return 0, fmt.Errorf("lists of %d values, more than the %d a vector column may hold", n, maxVectorWidth)
				}
				return n, nil
			}
		}
		v.close()
	}
	return 0, errors.New("the column holds only null or empty lists")
}

// vectorWidth returns the list length of vector column c in file i: from the schema for an Arrow
// fixed-size list, else from the first non-null, non-empty list in the file.
func (d *Dataset) vectorWidth(i int, c colInfo) (width int, err error) {
	// The peek decodes pages and record batches: a decoder panic, or the bounded allocator's
	// refusal of an absurd buffer, is recovered as in openFile.
	defer func() {
		if p := recover(); p != nil {
			width, err = 0, panicError("reading the first lists", p)
		}
	}()
	if d.Files[i].Format == Parquet {
		return d.parquetVectorWidth(i, c.pq)
	}
	return d.arrowVectorWidth(i, c.ar)
}

// arrowVectorWidth is vectorWidth for an Arrow IPC file or stream.
func (d *Dataset) arrowVectorWidth(i int, col arrowColumn) (width int, err error) {
	f := d.Files[i]
	fh, err := openPath(f.Path)
	if err != nil {
		return 0, pathCause(err)
	}
	defer fh.Close()
	if err := checkArrow(fh, f.Format, -1); err != nil {
		return 0, err
	}
	mem := newBoundedAllocator(f.Size)
	found := func(rec arrow.Record) (int, bool, error) {
		idx := rec.Schema().FieldIndices(col.name)
		if len(idx) == 0 {
			return 0, false, ErrMissingColumn
		}
		arr := rec.Column(idx[0])
		if t, ok := arr.DataType().(*arrow.FixedSizeListType); ok {
			return int(t.Len()), true, nil
		}
		la, ok := arr.(array.ListLike)
		if !ok {
			return 0, false, fmt.Errorf("unexpected Arrow array %T for a list column", arr)
		}
		for r := 0; r < arr.Len(); r++ {
			if arr.IsNull(r) {
				continue
			}
			if start, end := la.ValueOffsets(r); end > start {
				return int(end - start), true, nil
			}
		}
		return 0, false, nil
	}
	check := func(w int) (int, error) {
		if w <= 0 || w > maxVectorWidth {
			return 0, fmt.Errorf("lists of %d values: a vector column holds 1 to %d", w, maxVectorWidth)
		}
		return w, nil
	}
	if f.Format == ArrowFile {
		fr, err := ipc.NewFileReader(fh, ipc.WithAllocator(mem))
		if err != nil {
			return 0, err
		}
		defer fr.Close()
		for b := 0; b < fr.NumRecords(); b++ {
			rec, err := fr.RecordAt(b)
			if err != nil {
				return 0, err
			}
			w, ok, err := found(rec)
			rec.Release()
			if err != nil || ok {
				if err != nil {
					return 0, err
				}
				return check(w)
			}
		}
	} else {
		rd, err := ipc.NewReader(fh, ipc.WithAllocator(mem))
		if err != nil {
			return 0, err
		}
		defer rd.Release()
		for rd.Next() {
			w, ok, err := found(rd.Record())
			if err != nil {
				return 0, err
			}
			if ok {
				return check(w)
			}
		}
		if err := rd.Err(); err != nil {
			return 0, err
		}
	}
	return 0, errors.New("the column holds only null or empty lists")
}

// arrowVector reads the rows of an Arrow list array, a vector column of col.width values.
type arrowVector struct {
	col arrowColumn
	la  array.ListLike
	f64 []float64 // the list values, one of the two
	f32 []float32
	nul arrow.Array // the list values' array, asked for nulls when it has any (else nil)
}

// newArrowVector checks that arr is a list of float32 or float64 values.
func newArrowVector(col arrowColumn, arr arrow.Array) (arrowVector, error) {
	la, ok := arr.(array.ListLike)
	if !ok {
		return arrowVector{}, &colError{col: col.out, row: -1, err: fmt.Errorf("unexpected Arrow array %T for a list column", arr), name: col.name}
	}
	v := arrowVector{col: col, la: la}
	switch vals := la.ListValues().(type) {
	case *array.Float64:
		v.f64 = vals.Float64Values()
	case *array.Float32:
		v.f32 = vals.Float32Values()
	default:
		return arrowVector{}, &colError{col: col.out, row: -1, err: fmt.Errorf("list of %s, not of float32 or float64", vals.DataType()), name: col.name}
	}
	if la.ListValues().NullN() > 0 {
		v.nul = la.ListValues()
	}
	return v, nil
}

// row copies row i of the array (r of the batch being read, for errors) into dst (col.width
// values): a null list or element marks the row bad (its values NaN), a list of another length or
// a ±Inf value is a *colError.
func (v *arrowVector) row(i, r int, dst []float64) (bad bool, err error) {
	if v.la.IsNull(i) {
		for j := range dst {
			dst[j] = nan
		}
		return true, nil
	}
	start, end := v.la.ValueOffsets(i)
	if n := int(end - start); n != len(dst) {
		if n == 0 {
			for j := range dst {
				dst[j] = nan
			}
			return true, nil
		}
		return false, &colError{col: v.col.out, row: int64(r), name: v.col.name,
			err: fmt.Errorf("%w: a list of %d values, where the column's lists hold %d", ErrVectorLength, n, len(dst))}
	}
	if v.f64 != nil {
		copy(dst, v.f64[start:end])
	} else {
		for j, x := range v.f32[start:end] {
			dst[j] = float64(x)
		}
	}
	if v.nul != nil {
		for j := range dst {
			if v.nul.IsNull(int(start) + j) {
				dst[j] = nan
			}
		}
	}
	for j, x := range dst {
		if x-x != 0 {
			if x == x {
				return false, &colError{col: v.col.out + j, row: int64(r), err: ErrInfinite}
			}
			bad = true
		}
	}
	return bad, nil
}

// rows copies rows [p, p+m) of the array through the row buffers next(r) gives (see row), marking
// bad rows in bad.
func (v *arrowVector) rows(p, m int, bad []uint8, next func(r int) []float64) error {
	for r := range m {
		isBad, err := v.row(p+r, r, next(r))
		if err != nil {
			return err
		}
		if isBad {
			bad[r] = 1
		}
	}
	return nil
}

// transposeInto writes the n rows of block (w values each) into out: value j of row b to
// out[j][r0+b].
func transposeInto(out [][]float64, r0 int, block []float64, w, n int) {
	if n < transposeRows {
		for j, col := range out {
			for b := range n {
				col[r0+b] = block[b*w+j]
			}
		}
		return
	}
	for j, col := range out {
		c := col[r0 : r0+transposeRows : r0+transposeRows]
		c[0], c[1], c[2], c[3] = block[j], block[w+j], block[2*w+j], block[3*w+j]
		c[4], c[5], c[6], c[7] = block[4*w+j], block[5*w+j], block[6*w+j], block[7*w+j]
	}
}
