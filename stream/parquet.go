package stream

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"math/big"

	"github.com/apache/arrow/go/v17/arrow/decimal128"
	"github.com/apache/arrow/go/v17/arrow/decimal256"
	"github.com/apache/arrow/go/v17/arrow/float16"
	"github.com/parquet-go/parquet-go"
	"github.com/parquet-go/parquet-go/deprecated"
	"github.com/parquet-go/parquet-go/encoding"
	"github.com/parquet-go/parquet-go/format"
)

// convKind says how the values of a column become float64.
type convKind uint8

const (
	kF64      convKind = iota + 1 // DOUBLE: zero-copy view of the page
	kF32                          // FLOAT
	kI32                          // INT32, INT(8|16|32, signed)
	kI64                          // INT64, INT(64, signed)
	kU32                          // INT(8|16|32, unsigned) on INT32
	kU64                          // INT(64, unsigned) on INT64
	kDec32                        // DECIMAL on INT32: unscaled / 10^scale
	kDec64                        // DECIMAL on INT64
	kDecFixed                     // DECIMAL on FIXED_LEN_BYTE_ARRAY: big-endian two's complement
	kDecBytes                     // DECIMAL on BYTE_ARRAY
	kF16                          // FLOAT16 on FIXED_LEN_BYTE_ARRAY(2), little-endian
)

// pqColumn is the reading plan for one selected Parquet column.
type pqColumn struct {
	leaf   int // index of the column chunk in a row group
	kind   convKind
	maxDef byte
	scale  int32
	div    float64 // 10^scale for kDec32 and kDec64
	name   string  // the column's name
	out    int     // first dimension of the row it fills
	// Vector (list) columns only: the list length, the definition level at which a row's list has
	// an entry, and the maximum repetition level (1).
	width  int
	defRep byte
	maxRep byte
}

func (d *Dataset) openParquet(i int, fh Handle, size int64) ([]colInfo, error) {
	path := d.Files[i].Path
	footerAt, err := checkParquetFooter(fh, size)
	if err != nil {
		return nil, newError(path, "", err)
	}
	pf, err := parquet.OpenFile(fh, size, parquet.SkipPageIndex(true), parquet.SkipBloomFilters(true))
	if err != nil {
		return nil, newError(path, "", err)
	}
	of := &d.files[i]
	of.pq = pf
	of.footerAt = footerAt
	var base int64
	for _, rg := range pf.RowGroups() {
		of.rowBase = append(of.rowBase, base)
		base += rg.NumRows()
	}
	schema := pf.Metadata().Schema
	if len(schema) == 0 {
		return nil, newError(path, "", errors.New("empty Parquet schema"))
	}
	var cols []colInfo
	idx, leaf := 1, 0
	for c := 0; c < int(schema[0].NumChildren.V); c++ {
		if idx >= len(schema) {
			return nil, newError(path, "", errors.New("malformed Parquet schema"))
		}
		e := &schema[idx]
		if ci, ok := classifyParquetList(schema, idx); ok {
			n, leaves, err := subtree(schema, idx)
			if err != nil {
				return nil, newError(path, "", err)
			}
			ci.pq.leaf = leaf
			cols = append(cols, ci)
			idx += n
			leaf += leaves
			continue
		}
		if e.NumChildren.Valid && e.NumChildren.V > 0 {
			n, leaves, err := subtree(schema, idx)
			if err != nil {
				return nil, newError(path, "", err)
			}
			cols = append(cols, colInfo{name: e.Name, typ: groupTypeName(e), reason: "nested", nonRoot: true})
			idx += n
			leaf += leaves
			continue
		}
		ci := classifyParquet(e)
		ci.pq.leaf = leaf
		ci.allNull = allNullChunks(pf, leaf)
		if e.RepetitionType.Valid && e.RepetitionType.V == format.Repeated {
			ci = colInfo{name: e.Name, typ: "repeated " + ci.typ, reason: "nested", nonRoot: true}
		}
		cols = append(cols, ci)
		idx++
		leaf++
	}
	return cols, nil
}

// subtree returns the number of schema elements and of leaves in the subtree
// rooted at schema[i].
func subtree(schema []format.SchemaElement, i int) (size, leaves int, err error) {
	if i >= len(schema) {
		return 0, 0, errors.New("malformed Parquet schema")
	}
	e := &schema[i]
	if !e.NumChildren.Valid || e.NumChildren.V <= 0 {
		return 1, 1, nil
	}
	size = 1
	for c := 0; c < int(e.NumChildren.V); c++ {
		s, l, err := subtree(schema, i+size)
		if err != nil {
			return 0, 0, err
		}
		size += s
		leaves += l
	}
	return size, leaves, nil
}

func groupTypeName(e *format.SchemaElement) string {
	switch e.LogicalType.Value.(type) {
	case *format.ListType:
		return "list"
	case *format.MapType:
		return "map"
	}
	if e.ConvertedType.Valid {
		switch e.ConvertedType.V {
		case deprecated.List:
			return "list"
		case deprecated.Map, deprecated.MapKeyValue:
			return "map"
		}
	}
	return "struct"
}

// classifyParquet decides from a leaf's schema element whether it is numeric
// and how to convert it.
func classifyParquet(e *format.SchemaElement) colInfo {
	ci := colInfo{name: e.Name}
	if e.RepetitionType.Valid && e.RepetitionType.V == format.Optional {
		ci.pq.maxDef = 1
	}
	phys := e.Type.V
	no := func(typ, reason string) colInfo {
		ci.typ, ci.reason = typ, reason
		return ci
	}
	yes := func(typ string, k convKind) colInfo {
		ci.typ, ci.pq.kind = typ, k
		return ci
	}
	decimal := func(scale, precision int32) colInfo {
		typ := fmt.Sprintf("decimal(%d,%d)", precision, scale)
		ci.pq.scale = scale
		ci.pq.div = math.Pow10(int(scale))
		switch phys {
		case format.Int32:
			return yes(typ, kDec32)
		case format.Int64:
			return yes(typ, kDec64)
		case format.FixedLenByteArray:
			if e.TypeLength.V > 32 {
				return no(typ, "decimal wider than 32 bytes")
			}
			return yes(typ, kDecFixed)
		case format.ByteArray:
			return yes(typ, kDecBytes)
		}
		return no(typ, "decimal on an unsupported physical type")
	}
	intType := func(bits int8, signed bool) colInfo {
		name := fmt.Sprintf("int%d", bits)
		if !signed {
			name = "u" + name
		}
		switch {
		case phys == format.Int32 && signed:
			return yes(name, kI32)
		case phys == format.Int32:
			return yes(name, kU32)
		case phys == format.Int64 && signed:
			return yes(name, kI64)
		case phys == format.Int64:
			return yes(name, kU64)
		}
		return no(name, "integer on an unsupported physical type")
	}
	switch lt := e.LogicalType.Value.(type) {
	case *format.DecimalType:
		return decimal(lt.Scale, lt.Precision)
	case *format.IntType:
		return intType(lt.BitWidth, lt.IsSigned)
	case *format.Float16Type:
		if phys == format.FixedLenByteArray && e.TypeLength.V == 2 {
			return yes("float16", kF16)
		}
		return no("float16", "float16 on an unsupported physical type")
	case *format.StringType:
		return no("string", "not numeric")
	case *format.EnumType:
		return no("enum", "not numeric")
	case *format.JsonType:
		return no("json", "not numeric")
	case *format.BsonType:
		return no("bson", "not numeric")
	case *format.UUIDType:
		return no("uuid", "not numeric")
	case *format.DateType:
		return no("date", "temporal")
	case *format.TimeType:
		return no("time", "temporal")
	case *format.TimestampType:
		return no("timestamp", "temporal")
	case *format.NullType:
		return no("null", "always null")
	case nil:
	default:
		return no(lt.String(), "not numeric")
	}
	if e.ConvertedType.Valid {
		switch ct := e.ConvertedType.V; ct {
		case deprecated.Decimal:
			return decimal(e.Scale.V, e.Precision.V)
		case deprecated.UTF8:
			return no("string", "not numeric")
		case deprecated.Enum:
			return no("enum", "not numeric")
		case deprecated.Json:
			return no("json", "not numeric")
		case deprecated.Bson:
			return no("bson", "not numeric")
		case deprecated.Date:
			return no("date", "temporal")
		case deprecated.TimeMillis, deprecated.TimeMicros:
			return no("time", "temporal")
		case deprecated.TimestampMillis, deprecated.TimestampMicros:
			return no("timestamp", "temporal")
		case deprecated.Interval:
			return no("interval", "temporal")
		case deprecated.Int8:
			return intType(8, true)
		case deprecated.Int16:
			return intType(16, true)
		case deprecated.Int32:
			return intType(32, true)
		case deprecated.Int64:
			return intType(64, true)
		case deprecated.Uint8:
			return intType(8, false)
		case deprecated.Uint16:
			return intType(16, false)
		case deprecated.Uint32:
			return intType(32, false)
		case deprecated.Uint64:
			return intType(64, false)
		}
	}
	switch phys {
	case format.Double:
		return yes("float64", kF64)
	case format.Float:
		return yes("float32", kF32)
	case format.Int32:
		return yes("int32", kI32)
	case format.Int64:
		return yes("int64", kI64)
	case format.Boolean:
		return no("bool", "not numeric")
	case format.Int96:
		return no("int96", "temporal (legacy timestamp)")
	case format.ByteArray:
		return no("binary", "not numeric")
	case format.FixedLenByteArray:
		return no(fmt.Sprintf("fixed_len_byte_array(%d)", e.TypeLength.V), "not numeric")
	}
	return no("unknown", "unsupported physical type")
}

// columnChunkBytes returns the compressed size of a column chunk.
// allNullChunks reports whether the footer's statistics say that every value of column chunk leaf
// is null, in every row group, and some row group holds values. A chunk without statistics (its
// null count reads 0) is not all null.
func allNullChunks(pf *parquet.File, leaf int) bool {
	var values int64
	for _, rg := range pf.Metadata().RowGroups {
		if leaf >= len(rg.Columns) {
			return false
		}
		m := &rg.Columns[leaf].MetaData
		if m.Statistics.NullCount != m.NumValues {
			return false
		}
		values += m.NumValues
	}
	return values > 0
}

func columnChunkBytes(pf *parquet.File, rowGroup, leaf int) int64 {
	rgs := pf.Metadata().RowGroups
	if rowGroup < len(rgs) && leaf < len(rgs[rowGroup].Columns) {
		return rgs[rowGroup].Columns[leaf].MetaData.TotalCompressedSize
	}
	return 0
}

// pqSource reads one Parquet row group.
type pqSource struct {
	cols      []pqCursor // scalar columns
	vecs      []pqVector // vector (list) columns
	names     []string   // name of each dimension of a row
	remaining int64      // rows of the row group not yet read
	at        int        // the dimension being decoded, -1 between columns
}

func (s *pqSource) decoding() int { return s.at }

// Source modes of a pqCursor's current page.
const (
	mF64  uint8 = iota + 1 // f64 (the page itself, or converted into scratch)
	mF32                   // f32
	mI32                   // i32
	mI64                   // i64
	mU32                   // u32
	mU64                   // u64
	mDict                  // idx through dictF64
)

// pqCursor walks the pages of one column chunk.
type pqCursor struct {
	plan  pqColumn
	pages *parquet.FilePages

	page  parquet.Page
	defs  []byte // definition levels, nil for a required column
	pos   int    // next row of the page
	vpos  int    // next packed non-null value of the page
	nrows int    // rows of the page
	mode  uint8

	f64 []float64
	f32 []float32
	i32 []int32
	i64 []int64
	u32 []uint32
	u64 []uint64
	idx []int32

	dict    parquet.Dictionary
	dictF64 []float64 // dict converted to float64
	scratch []float64 // converted page values for the conversion kinds
}

func (d *Dataset) openParquetUnit(of *openFile, u Unit, fh Handle) (*pqSource, error) {
	rgs := of.pq.RowGroups()
	if u.Index < 0 || u.Index >= len(rgs) {
		return nil, fmt.Errorf("no row group %d", u.Index)
	}
	rg := rgs[u.Index]
	chunks := rg.ColumnChunks()
	size, err := fileSize(fh)
	if err != nil {
		return nil, err
	}
	meta := of.pq.Metadata().RowGroups
	if u.Index >= len(meta) {
		return nil, fmt.Errorf("no row group %d in the footer", u.Index)
	}
	for _, plan := range of.pqCols {
		if plan.leaf >= len(meta[u.Index].Columns) || plan.leaf >= len(chunks) {
			return nil, &ReadError{File: d.Files[u.File].Path, Unit: u.Index, Row: -1, Column: plan.name,
				Err: corruptf("row group %d has no column chunk %d", u.Index, plan.leaf)}
		}
		cm := &meta[u.Index].Columns[plan.leaf].MetaData
		start := cm.DataPageOffset
		if cm.DictionaryPageOffset != 0 { // as parquet-go's FilePages does
			start = cm.DictionaryPageOffset
		}
		shape := chunkShape{codec: cm.Codec, maxDef: plan.maxDef, maxRep: plan.maxRep}
		if err := checkColumnChunk(fh, start, cm.TotalCompressedSize, min(of.footerAt, size), rg.NumRows(), shape); err != nil {
			return nil, &ReadError{File: d.Files[u.File].Path, Unit: u.Index, Row: -1, Column: plan.name,
				Err: fmt.Errorf("row group %d: %w", u.Index, err)}
		}
	}
	s := &pqSource{names: d.Columns, remaining: rg.NumRows(), at: -1}
	for _, plan := range of.pqCols {
		fc, ok := chunks[plan.leaf].(*parquet.FileColumnChunk)
		if !ok {
			s.close()
			return nil, fmt.Errorf("column chunk %d is not a file column chunk", plan.leaf)
		}
		pages := fc.PagesFrom(fh)
		if isLZ4(of.pq, u.Index, plan.leaf) {
			if pages, err = openLZ4Chunk(of.pq, fh, u.Index, plan.leaf); err != nil {
				s.close()
				return nil, &ReadError{File: d.Files[u.File].Path, Unit: u.Index, Row: -1, Column: plan.name,
					Err: fmt.Errorf("row group %d: %w", u.Index, err)}
			}
		}
		if plan.width > 0 {
			s.vecs = append(s.vecs, pqVector{plan: plan, pages: pages, buf: make([]float64, plan.width)})
		} else {
			s.cols = append(s.cols, pqCursor{plan: plan, pages: pages})
		}
	}
	return s, nil
}

func (s *pqSource) fill(dst []float64, bad []uint8, rows int) (int, error) {
	m := int(min(int64(rows), s.remaining))
	if m == 0 {
		return 0, nil
	}
	d := len(s.names)
	s.at = -1 // set per column below; not reset by a defer, which would run before Read's recover
	for c := range s.cols {
		cur := &s.cols[c]
		s.at = cur.plan.out
		for filled := 0; filled < m; {
			if cur.pos == cur.nrows {
				if err := cur.next(); err != nil {
					return 0, &colError{col: cur.plan.out, row: -1, err: err}
				}
			}
			k := min(m-filled, cur.nrows-cur.pos)
			if inf := cur.put(dst, filled*d+cur.plan.out, d, k, bad[filled:filled+k]); inf >= 0 {
				return 0, &colError{col: cur.plan.out, row: int64(filled + inf), err: ErrInfinite}
			}
			filled += k
		}
	}
	for i := range s.vecs {
		v := &s.vecs[i]
		s.at = v.plan.out
		for r := 0; r < m; r++ {
			if err := v.fillRow(bad, r); err != nil {
				return 0, err
			}
			copy(dst[r*d+v.plan.out:], v.buf)
		}
	}
	s.remaining -= int64(m)
	return m, nil
}

func (s *pqSource) fillColumns(cols, scratch [][]float64, bad []uint8, rows int) (int, error) {
	m := int(min(int64(rows), s.remaining))
	if m == 0 {
		return 0, nil
	}
	// Stop where the first page of any column ends, so that each column is one run of one page.
	s.at = -1 // set per column below; not reset by a defer, which would run before Read's recover
	for c := range s.cols {
		cur := &s.cols[c]
		s.at = cur.plan.out
		if cur.pos == cur.nrows {
			if err := cur.next(); err != nil {
				return 0, &colError{col: cur.plan.out, row: -1, err: err}
			}
		}
		m = min(m, cur.nrows-cur.pos)
	}
	for i := range s.vecs {
		v := &s.vecs[i]
		s.at = v.plan.out
		out := cols[v.plan.out : v.plan.out+v.plan.width]
		for j := range out {
			out[j] = scratch[v.plan.out+j][:m]
		}
		if err := v.fillColumns(out, bad, m); err != nil {
			return 0, err
		}
	}
	for i := range s.cols {
		cur := &s.cols[i]
		c := cur.plan.out
		s.at = c
		var inf int
		if cur.defs == nil && cur.mode == mF64 {
			inf = viewDense(&cols[c], cur.f64[cur.pos:cur.pos+m], bad)
			cur.pos += m
		} else {
			cols[c] = scratch[c][:m]
			inf = cur.put(cols[c], 0, 1, m, bad[:m])
		}
		if inf >= 0 {
			return 0, &colError{col: c, row: int64(inf), err: ErrInfinite}
		}
	}
	s.remaining -= int64(m)
	return m, nil
}

func (s *pqSource) column(c int) string { return s.names[c] }

func (s *pqSource) close() error {
	var first error
	for i := range s.vecs {
		if err := s.vecs[i].close(); err != nil && first == nil {
			first = err
		}
	}
	for c := range s.cols {
		cur := &s.cols[c]
		if cur.page != nil {
			parquet.Release(cur.page)
			cur.page = nil
		}
		if cur.pages != nil {
			if err := cur.pages.Close(); err != nil && first == nil {
				first = err
			}
			cur.pages = nil
		}
	}
	return first
}

// next moves to the next non-empty page of the column chunk.
func (cur *pqCursor) next() error {
	for {
		if cur.page != nil {
			parquet.Release(cur.page)
			cur.page = nil
			cur.f64, cur.f32, cur.i32, cur.i64, cur.u32, cur.u64, cur.idx, cur.defs = nil, nil, nil, nil, nil, nil, nil, nil
		}
		page, err := cur.pages.ReadPage()
		if err == io.EOF {
			return errors.New("column chunk holds fewer rows than its row group")
		}
		if err != nil {
			return err
		}
		cur.page = page
		cur.pos, cur.vpos = 0, 0
		cur.nrows = int(page.NumRows())
		if cur.nrows == 0 {
			continue
		}
		return cur.load(page)
	}
}

// load sets up the typed views of a freshly read page.
func (cur *pqCursor) load(page parquet.Page) error {
	nonNull := cur.nrows
	if cur.plan.maxDef > 0 {
		cur.defs = page.DefinitionLevels()
		if len(cur.defs) != cur.nrows {
			return fmt.Errorf("page has %d definition levels for %d rows", len(cur.defs), cur.nrows)
		}
		nonNull -= int(page.NumNulls())
	}
	data := page.Data()
	var have int
	if dict := page.Dictionary(); dict != nil {
		cur.idx = data.Int32()
		have = len(cur.idx)
		if dict != cur.dict {
			cur.dictF64 = convert(cur.plan, dict.Page().Data(), cur.dictF64[:0])
			cur.dict = dict
		}
		cur.mode = mDict
	} else {
		switch cur.plan.kind {
		case kF64:
			cur.f64, cur.mode = data.Double(), mF64
			have = len(cur.f64)
		case kF32:
			cur.f32, cur.mode = data.Float(), mF32
			have = len(cur.f32)
		case kI32:
			cur.i32, cur.mode = data.Int32(), mI32
			have = len(cur.i32)
		case kI64:
			cur.i64, cur.mode = data.Int64(), mI64
			have = len(cur.i64)
		case kU32:
			cur.u32, cur.mode = data.Uint32(), mU32
			have = len(cur.u32)
		case kU64:
			cur.u64, cur.mode = data.Uint64(), mU64
			have = len(cur.u64)
		default:
			cur.scratch = convert(cur.plan, data, cur.scratch[:0])
			cur.f64, cur.mode = cur.scratch, mF64
			have = len(cur.f64)
		}
	}
	if have < nonNull {
		return fmt.Errorf("page holds %d values for %d non-null rows", have, nonNull)
	}
	return nil
}

// put copies k rows of the current page to dst[o], dst[o+d], ...
func (cur *pqCursor) put(dst []float64, o, d, k int, bad []uint8) int {
	p := cur.pos
	cur.pos += k
	if cur.defs == nil {
		switch cur.mode {
		case mF64:
			return putDense(dst, o, d, cur.f64[p:p+k], bad)
		case mF32:
			return putDense(dst, o, d, cur.f32[p:p+k], bad)
		case mI32:
			return putDense(dst, o, d, cur.i32[p:p+k], bad)
		case mI64:
			return putDense(dst, o, d, cur.i64[p:p+k], bad)
		case mU32:
			return putDense(dst, o, d, cur.u32[p:p+k], bad)
		case mU64:
			return putDense(dst, o, d, cur.u64[p:p+k], bad)
		default:
			return putDict(dst, o, d, cur.idx[p:p+k], cur.dictF64, bad)
		}
	}
	defs, v, maxDef := cur.defs[p:p+k], cur.vpos, cur.plan.maxDef
	var used, inf int
	switch cur.mode {
	case mF64:
		used, inf = putLevels(dst, o, d, defs, maxDef, cur.f64[v:], bad)
	case mF32:
		used, inf = putLevels(dst, o, d, defs, maxDef, cur.f32[v:], bad)
	case mI32:
		used, inf = putLevels(dst, o, d, defs, maxDef, cur.i32[v:], bad)
	case mI64:
		used, inf = putLevels(dst, o, d, defs, maxDef, cur.i64[v:], bad)
	case mU32:
		used, inf = putLevels(dst, o, d, defs, maxDef, cur.u32[v:], bad)
	case mU64:
		used, inf = putLevels(dst, o, d, defs, maxDef, cur.u64[v:], bad)
	default:
		used, inf = putDictLevels(dst, o, d, defs, maxDef, cur.idx[v:], cur.dictF64, bad)
	}
	cur.vpos += used
	return inf
}

// convert appends the values of a page or dictionary, converted to float64,
// to out. It is used for dictionaries and for the kinds without a typed
// zero-copy view (decimals, float16).
func convert(plan pqColumn, values encoding.Values, out []float64) []float64 {
	switch plan.kind {
	case kF64:
		return append(out, values.Double()...)
	case kF32:
		return appendFloat(out, values.Float())
	case kI32:
		return appendFloat(out, values.Int32())
	case kI64:
		return appendFloat(out, values.Int64())
	case kU32:
		return appendFloat(out, values.Uint32())
	case kU64:
		return appendFloat(out, values.Uint64())
	case kDec32:
		for _, v := range values.Int32() {
			out = append(out, float64(v)/plan.div)
		}
	case kDec64:
		for _, v := range values.Int64() {
			out = append(out, float64(v)/plan.div)
		}
	case kDecFixed:
		data, size := values.FixedLenByteArray()
		for i := 0; size > 0 && i+size <= len(data); i += size {
			out = append(out, decimalBytes(data[i:i+size], plan.scale))
		}
	case kDecBytes:
		data, offsets := values.ByteArray()
		for i := 0; i+1 < len(offsets); i++ {
			out = append(out, decimalBytes(data[offsets[i]:offsets[i+1]], plan.scale))
		}
	case kF16:
		data, size := values.FixedLenByteArray()
		for i := 0; size == 2 && i+2 <= len(data); i += 2 {
			out = append(out, float64(float16.FromBits(binary.LittleEndian.Uint16(data[i:])).Float32()))
		}
	}
	return out
}

func appendFloat[T number](out []float64, src []T) []float64 {
	for _, v := range src {
		out = append(out, float64(v))
	}
	return out
}

// decimalBytes converts a big-endian two's-complement unscaled decimal to
// float64 with arrow's decimal128/decimal256 conversions (math/big beyond 32
// bytes).
func decimalBytes(b []byte, scale int32) float64 {
	var buf [32]byte
	if len(b) > 0 && b[0]&0x80 != 0 {
		for i := range buf {
			buf[i] = 0xFF
		}
	}
	be := binary.BigEndian
	switch {
	case len(b) == 0:
		return 0
	case len(b) <= 16:
		copy(buf[16-len(b):16], b)
		return decimal128.New(int64(be.Uint64(buf[0:8])), be.Uint64(buf[8:16])).ToFloat64(scale)
	case len(b) <= 32:
		copy(buf[32-len(b):], b)
		return decimal256.New(be.Uint64(buf[0:8]), be.Uint64(buf[8:16]), be.Uint64(buf[16:24]), be.Uint64(buf[24:32])).ToFloat64(scale)
	}
	x := new(big.Int).SetBytes(b)
	if b[0]&0x80 != 0 {
		x.Sub(x, new(big.Int).Lsh(big.NewInt(1), uint(8*len(b))))
	}
	f, _ := new(big.Float).SetInt(x).Float64()
	return f / math.Pow10(int(scale))
}
