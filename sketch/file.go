package sketch

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"math"
)

// The sketch file format, version 2, all integers little-endian:
//
//	magic    [8]byte  "KGSKETCH"
//	version  uint32   2 (1 is still read: it has no units, which are then all 1, and no ids)
//	body     ...      the fields below, in order
//	ids      strings  (version 2 only) the content identities of the data files (Meta.ContentIDs)
//	crc      uint32   CRC-32C (Castagnoli) of everything before it, magic included
//
// Version 1 is version 2 without units and ids; Decode reads both, Encode writes version 2.
// Strings are a uint32 length and bytes; float slices a uint32 count and float64 bits; the coreset and
// the sample are a uint32 row count, then keys, rows and payload weights. Mini-batch state is stored
// settled (as CentreSets in raw units). Version 2 adds the moments' and the cross-products' units (a
// float slice each, after the moments' box and after the cross-products). Every count is checked against the bytes that remain before
// anything is allocated, so a corrupt or hostile file fails cleanly.
const (
	fileMagic   = "KGSKETCH"
	fileVersion = 2
	// fileVersionNoUnits is the oldest version Decode reads: no units and no content identities.
	fileVersionNoUnits = 1
	// MaxFileBytes bounds the size of a sketch file that Decode accepts.
	MaxFileBytes = 1 << 30
	// maxStateBytes is the mini-batch state Decode allows whatever the file size.
	maxStateBytes = 64 << 20
)

// Errors returned by [Decode], wrapped with detail.
var (
	ErrNotSketch  = errors.New("sketch: not a kgauge sketch file")
	ErrVersion    = errors.New("sketch: unsupported sketch file version")
	ErrCorrupt    = errors.New("sketch: corrupt sketch file")
	ErrFileTooBig = errors.New("sketch: sketch file too large")
)

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// Encode writes s in the sketch file format. It settles s (freezes its mini-batch state).
func (s *Sketch) Encode(w io.Writer) error {
	s.settle()
	var e enc
	e.buf.WriteString(fileMagic)
	e.u32(fileVersion)
	c := s.cfg
	e.strs(c.Columns)
	e.i64(int64(c.MinK))
	e.i64(int64(c.MaxK))
	e.i64(int64(c.CoresetSize))
	e.i64(int64(c.SampleSize))
	e.i64(int64(c.MiniBatchSize))
	e.i64(c.MiniBatchRows)
	e.i64(c.ExpectedRows)
	e.u64(c.Seed)
	e.strs(s.Meta.Sources)
	e.i64(s.Meta.SkippedRows)
	e.i64(s.Meta.ProbeRows)
	e.floats(s.probeCentre)
	e.floats(s.inv)
	e.f64(s.meanSq)
	e.i64(s.mom.N)
	for _, v := range [][]float64{s.mom.Shift, s.mom.S1, s.mom.S2, s.mom.Min, s.mom.Max, s.mom.Unit} {
		e.floats(v)
	}
	e.i64(s.cross.N)
	for _, v := range [][]float64{s.cross.Shift, s.cross.S1, s.cross.C, s.cross.Unit} {
		e.floats(v)
	}
	e.topK(s.coreset)
	e.topK(s.sample)
	e.u32(uint32(len(s.parts)))
	for _, ps := range s.parts {
		e.u32(uint32(len(ps)))
		for _, p := range ps {
			e.i64(int64(p.K))
			e.floats(p.Centres)
			e.floats(p.Counts)
		}
	}
	e.strs(s.Meta.ContentIDs)
	e.u32(crc32.Checksum(e.buf.Bytes(), castagnoli))
	_, err := w.Write(e.buf.Bytes())
	return err
}

// Decode reads a sketch written by [Sketch.Encode]. A file that is not a sketch, of another version,
// truncated, or whose checksum or contents do not add up is an error wrapping [ErrNotSketch],
// [ErrVersion] or [ErrCorrupt].
func Decode(r io.Reader) (*Sketch, error) {
	data, err := io.ReadAll(io.LimitReader(r, MaxFileBytes+1))
	if err != nil {
		return nil, fmt.Errorf("sketch: read: %w", err)
	}
	if len(data) > MaxFileBytes {
		return nil, ErrFileTooBig
	}
	if len(data) < len(fileMagic)+8 || string(data[:len(fileMagic)]) != fileMagic {
		return nil, ErrNotSketch
	}
	version := binary.LittleEndian.Uint32(data[8:])
	if version != fileVersion && version != fileVersionNoUnits {
		return nil, fmt.Errorf("%w: %d (this kgauge reads versions %d and %d)", ErrVersion, version, fileVersionNoUnits, fileVersion)
	}
	body, sum := data[:len(data)-4], binary.LittleEndian.Uint32(data[len(data)-4:])
	if crc32.Checksum(body, castagnoli) != sum {
		return nil, fmt.Errorf("%w: checksum mismatch", ErrCorrupt)
	}
	d := dec{b: body[12:], version: version}
	s, err := d.sketch()
	if err == nil && version >= 2 {
		s.Meta.ContentIDs = d.strs()
		err = d.err
	}
	if err != nil {
		return nil, fmt.Errorf("%w: %v", ErrCorrupt, err)
	}
	if len(d.b) != 0 {
		return nil, fmt.Errorf("%w: %d trailing bytes", ErrCorrupt, len(d.b))
	}
	if err := s.check(); err != nil {
		return nil, fmt.Errorf("%w: %w", ErrCorrupt, err)
	}
	return s, nil
}

type enc struct{ buf bytes.Buffer }

func (e *enc) u32(v uint32)  { e.buf.Write(binary.LittleEndian.AppendUint32(nil, v)) }
func (e *enc) u64(v uint64)  { e.buf.Write(binary.LittleEndian.AppendUint64(nil, v)) }
func (e *enc) i64(v int64)   { e.u64(uint64(v)) }
func (e *enc) f64(v float64) { e.u64(math.Float64bits(v)) }
func (e *enc) str(v string)  { e.u32(uint32(len(v))); e.buf.WriteString(v) }
func (e *enc) strs(v []string) {
	e.u32(uint32(len(v)))
	for _, s := range v {
		e.str(s)
	}
}
func (e *enc) floats(v []float64) {
	e.u32(uint32(len(v)))
	for _, f := range v {
		e.f64(f)
	}
}

func (e *enc) topK(t *topK) {
	e.u32(uint32(t.len()))
	t.each(func(key float64, x []float64, w float64) {
		e.f64(key)
		for _, v := range x {
			e.f64(v)
		}
		e.f64(w)
	})
}

// dec reads the body; every length is checked against what remains.
type dec struct {
	b       []byte
	version uint32
	err     error
}

func (d *dec) fail(format string, args ...any) {
	if d.err == nil {
		d.err = fmt.Errorf(format, args...)
	}
}

func (d *dec) take(n int) []byte {
	if d.err != nil {
		return nil
	}
	if n < 0 || n > len(d.b) {
		d.fail("truncated")
		return nil
	}
	v := d.b[:n]
	d.b = d.b[n:]
	return v
}

func (d *dec) u32() uint32 {
	if v := d.take(4); v != nil {
		return binary.LittleEndian.Uint32(v)
	}
	return 0
}

func (d *dec) u64() uint64 {
	if v := d.take(8); v != nil {
		return binary.LittleEndian.Uint64(v)
	}
	return 0
}

func (d *dec) i64() int64   { return int64(d.u64()) }
func (d *dec) f64() float64 { return math.Float64frombits(d.u64()) }

// count reads a length whose items take at least unit bytes each and checks it fits.
func (d *dec) count(unit int) int {
	n := int(d.u32())
	if d.err == nil && n*unit > len(d.b) {
		d.fail("length %d exceeds the remaining %d bytes", n, len(d.b))
		return 0
	}
	return n
}

func (d *dec) str() string { return string(d.take(d.count(1))) }

func (d *dec) strs() []string {
	n := d.count(4)
	v := make([]string, 0, n)
	for range n {
		v = append(v, d.str())
	}
	return v
}

func (d *dec) floats(want int) []float64 {
	n := d.count(8)
	if d.err == nil && want >= 0 && n != want {
		d.fail("got %d values, want %d", n, want)
		return nil
	}
	v := make([]float64, n)
	for i := range v {
		v[i] = d.f64()
	}
	return v
}

// units reads a unit slice, or makes one of ones for a file of the version without units.
func (d *dec) units(dim int) []float64 {
	if d.version == fileVersionNoUnits {
		u := make([]float64, dim)
		for j := range u {
			u[j] = 1
		}
		return u
	}
	return d.floats(dim)
}

func (d *dec) smallInt(name string, lo, hi int64) int {
	v := d.i64()
	if d.err == nil && (v < lo || v > hi) {
		d.fail("%s %d out of range", name, v)
	}
	return int(v)
}

func (d *dec) sketch() (*Sketch, error) {
	var c Config
	c.Columns = d.strs()
	c.MinK = d.smallInt("min-k", 1, 1<<20)
	c.MaxK = d.smallInt("max-k", 1, 1<<20)
	c.CoresetSize = d.smallInt("coreset size", 1, 1<<28)
	c.SampleSize = d.smallInt("sample size", 1, 1<<28)
	c.MiniBatchSize = d.smallInt("mini-batch size", 1, 1<<28)
	c.MiniBatchRows = d.i64()
	c.ExpectedRows = d.i64()
	c.Seed = d.u64()
	if d.err != nil {
		return nil, d.err
	}
	if err := c.Validate(); err != nil {
		return nil, err
	}
	dim := len(c.Columns)
	// New allocates the mini-batch state (k centres of dim values and k counts for every k in
	// range) and a mini-batch buffer from the config alone; a hostile config (the checks above
	// allow max-k and the mini-batch size up to 2^20 and 2^28) would make it allocate terabytes
	// before a centre is read.
	ks := int64(c.MaxK - c.MinK + 1)
	centres := ks * int64(c.MinK+c.MaxK) / 2 * int64(dim+1) * 8
	// The mini-batch buffer holds each row twice (probe-scaled, and for the covariance
	// crossStride apart) and a label for each goroutine of the steps.
	buf := int64(c.MiniBatchSize) * int64((dim+crossStride(dim))*8+4*stepGoroutines(dim))
	if centres+buf > max(maxStateBytes, 16*int64(len(d.b))) {
		return nil, fmt.Errorf("k range %d..%d and mini-batch size %d with %d columns need %d bytes, more than the file justifies",
			c.MinK, c.MaxK, c.MiniBatchSize, dim, centres+buf)
	}
	var meta Meta
	meta.Sources = d.strs()
	meta.SkippedRows = d.i64()
	meta.ProbeRows = d.i64()
	centre := d.floats(dim)
	inv := d.floats(dim)
	meanSq := d.f64()
	if d.err != nil {
		return nil, d.err
	}
	scale := make([]float64, dim)
	for j, v := range inv {
		scale[j] = 1 / v
	}
	// New copies its starting centres, so every k shares one slice of zeros.
	zeros := make([]float64, c.MaxK*dim)
	init := map[int][]float64{}
	for k := c.MinK; k <= c.MaxK; k++ {
		init[k] = zeros[:k*dim]
	}
	s, err := New(c, Probe{Center: centre, Scale: scale, MeanSq: meanSq, Init: init})
	if err != nil {
		return nil, err
	}
	s.mb = nil
	s.Meta = meta
	s.mom.N = d.i64()
	s.mom.Shift, s.mom.S1, s.mom.S2 = d.floats(dim), d.floats(dim), d.floats(dim)
	s.mom.Min, s.mom.Max = d.floats(dim), d.floats(dim)
	s.mom.Unit = d.units(dim)
	s.cross.N = d.i64()
	s.cross.Shift, s.cross.S1, s.cross.C = d.floats(dim), d.floats(dim), d.floats(dim*dim)
	s.cross.Unit = d.units(dim)
	d.topK(s.coreset)
	d.topK(s.sample)
	if np := int(d.u32()); d.err == nil && np != len(s.parts) {
		d.fail("%d mini-batch ranges, want %d", np, len(s.parts))
	}
	for i := range s.parts {
		n := d.count(12)
		for range n {
			k := d.smallInt("k", int64(c.MinK+i), int64(c.MinK+i))
			p := CentreSet{K: k, Centres: d.floats(k * dim), Counts: d.floats(k)}
			if d.err != nil {
				break
			}
			s.parts[i] = append(s.parts[i], p)
		}
	}
	return s, d.err
}

func (d *dec) topK(t *topK) {
	n := d.count(8 * (t.d + 2))
	if d.err == nil && n > t.cap {
		d.fail("%d rows kept, more than the capacity %d", n, t.cap)
		return
	}
	// Room for the rows in the file, not for the config's expected rows: those are the file's word,
	// and a capacity of 2^28 rows with a large expected count would allocate gigabytes for the
	// first row (found by FuzzDecode in CI). Rows merged in later double the buffers from here.
	t.expect = n
	x := make([]float64, t.d)
	for range n {
		key := d.f64()
		for j := range x {
			x[j] = d.f64()
		}
		w := d.f64()
		if d.err != nil {
			return
		}
		t.offer(key, x, w)
	}
}
