package stream

import (
	"errors"
	"fmt"
	"math/rand/v2"
	"strings"
	"sync"

	"github.com/parquet-go/parquet-go"
)

// Options says which columns to read. The zero value selects every numeric
// column.
type Options struct {
	// Columns lists the feature columns in output order. Nil or empty selects
	// every numeric column (ints, uints, floats, decimals as float) of the
	// first file, in schema order.
	Columns []string
}

// IgnoredColumn is a column that is not a feature, with the reason, such as
// {"meter_id", "string", "not numeric"}.
type IgnoredColumn struct{ Name, Type, Reason string }

// Unit is one independently readable piece of a dataset: a Parquet row group,
// an Arrow IPC-file record batch, or a whole Arrow IPC stream (streams cannot
// seek).
type Unit struct {
	File  int   // index into Dataset.Files
	Index int   // row group or record batch index within the file (0 for a stream)
	Rows  int64 // rows from metadata, or -1 when unknown (Arrow IPC files and streams)
	// Bytes is the size of the selected columns in this unit: the compressed
	// column chunk sizes for Parquet, an even share of the file size for an
	// Arrow IPC-file batch, the file size for an Arrow IPC stream.
	Bytes int64
}

// Dataset is a set of files with a resolved column selection, ready to be read
// unit by unit. It keeps the Parquet footers and Arrow schemas in memory but
// no open files.
type Dataset struct {
	Files   []File
	Columns []string        // the selected feature columns, in output order
	Types   []string        // their type names (as in the first file), parallel to Columns
	Ignored []IgnoredColumn // every column not used, with why
	Units   []Unit          // in file order
	Rows    int64           // total rows from metadata over units with known Rows, less deleted rows
	Bytes   int64           // total of Units[i].Bytes

	files []openFile
	// columns keeps the per-column buffers of ReadColumns (a *[][]float64, one slice a column)
	// that closed readers gave back, so that a unit opened after another does not allocate and
	// clear its own: at 768 columns and 4,096 rows a call, 25 MB for each record batch of an Arrow
	// IPC file. Allocated on first use (see UnitReader.ReadColumns).
	columns *sync.Pool
}

// openFile is what a Dataset keeps about one file.
type openFile struct {
	pq       *parquet.File // Parquet footer; its reader is closed, pages are read with PagesFrom
	footerAt int64         // Parquet: offset of the footer, where the data part ends
	rowBase  []int64       // Parquet: first row of each row group within the file
	pqCols   []pqColumn    // Parquet: plan for each selected column
	arCols   []arrowColumn // Arrow: plan for each selected column
	batches  int           // Arrow IPC file: number of record batches
}

// colInfo describes one top-level column of one file.
type colInfo struct {
	name    string
	typ     string
	reason  string // why it cannot be a feature; "" when numeric
	nonRoot bool   // nested: an error when named, whatever the type
	vector  bool   // a list of floats: a feature of its lists' length when named (see vector.go)
	allNull bool   // Parquet: every value of the column is null, by the footer's statistics
	pq      pqColumn
	ar      arrowColumn
}

// Open reads every file's footer or schema once, resolves the column selection
// and lists the units.
//
// Timestamp, date, time, interval, duration, boolean, string and binary
// columns are never features; naming one in Options.Columns is an error
// wrapping ErrNotNumeric. Nested list, map and struct columns are ignored with
// a reason, or an error when named. A selected column missing from one file
// is an error naming the file and the column (ErrMissingColumn); a named
// column found in no file wraps ErrUnknownColumn. Files with zero rows are
// fine: they contribute no units or units with Rows == 0.
func Open(files []File, opt Options) (ds *Dataset, err error) {
	if len(files) == 0 {
		return nil, newError("", "", ErrNoDataFiles)
	}
	infos := make([][]colInfo, len(files))
	d := &Dataset{Files: append([]File(nil), files...), files: make([]openFile, len(files)), columns: new(sync.Pool)}
	for i, f := range files {
		infos[i], err = d.openFile(i, f)
		if err != nil {
			return nil, err
		}
		if err := checkDuplicateNames(f.Path, infos[i], opt.Columns); err != nil {
			return nil, err
		}
	}

	// Resolve the selection against the first file, then check every file.
	first := infos[0]
	nullOnly := onlyNulls(infos)
	var sel []string
	if len(opt.Columns) == 0 {
		for _, c := range first {
			if c.reason == "" && !c.vector && !nullOnly[c.name] {
				sel = append(sel, c.name)
			}
		}
		if len(sel) == 0 {
			return nil, newError(files[0].Path, "", fmt.Errorf("%w (columns: %s)", ErrNoNumericColumns, describe(first)))
		}
	} else {
		seen := make(map[string]bool)
		for _, name := range opt.Columns {
			if seen[name] {
				return nil, newError("", name, errors.New("column named twice"))
			}
			seen[name] = true
			if nullOnly[name] {
				file := ""
				if len(files) == 1 {
					file = files[0].Path
				}
				return nil, newError(file, name, fmt.Errorf("%w (every value is null in every file's statistics); leave it out of --columns", ErrOnlyNulls))
			}
			if !anyHas(infos, name) {
				file := ""
				if len(files) == 1 {
					file = files[0].Path
				}
				return nil, newError(file, name, fmt.Errorf("%w (columns: %s)", ErrUnknownColumn, describe(first)))
			}
		}
		sel = opt.Columns
	}
	selected := make(map[string]bool, len(sel))
	for _, name := range sel {
		selected[name] = true
	}
	widths := make(map[string]int) // vector columns: the length of their lists in the first file
	for i, f := range files {
		of := &d.files[i]
		out := 0 // the first dimension of the next column
		for _, name := range sel {
			c, ok := find(infos[i], name)
			if !ok {
				return nil, newError(f.Path, name, ErrMissingColumn)
			}
			if c.reason != "" {
				return nil, newError(f.Path, name, notNumeric(c))
			}
			width := 0
			if c.vector {
				if width, err = d.vectorWidth(i, c); err != nil {
					return nil, newError(f.Path, name, err)
				}
				if w, ok := widths[name]; ok && w != width {
					return nil, newError(f.Path, name, fmt.Errorf("%w: lists of %d values here, of %d in %s", ErrVectorLength, width, w, files[0].Path))
				}
				widths[name] = width
			}
			if f.Format == Parquet {
				plan := c.pq
				plan.name, plan.out, plan.width = name, out, width
				of.pqCols = append(of.pqCols, plan)
			} else {
				plan := c.ar
				plan.out, plan.width = out, width
				of.arCols = append(of.arCols, plan)
			}
			out += max(width, 1)
			if i > 0 {
				continue
			}
			if width == 0 {
				d.Columns = append(d.Columns, name)
				d.Types = append(d.Types, c.typ)
				continue
			}
			for j := range width {
				d.Columns = append(d.Columns, vectorName(name, j))
				d.Types = append(d.Types, c.typ)
			}
		}
	}
	ignored := make(map[string]bool)
	for i := range files {
		for _, c := range infos[i] {
			if selected[c.name] || ignored[c.name] {
				continue
			}
			ignored[c.name] = true
			reason := c.reason
			switch {
			case reason != "":
			case c.vector && i == 0:
				reason = "a vector column: name it with --columns to read it"
			case nullOnly[c.name]:
				reason = "always null"
			case i > 0:
				reason = "not in the first file"
			default:
				reason = "not selected"
			}
			d.Ignored = append(d.Ignored, IgnoredColumn{Name: c.name, Type: c.typ, Reason: reason})
		}
	}
	d.listUnits()
	return d, nil
}

// openFile reads the footer or schema of file i and returns its columns.
func (d *Dataset) openFile(i int, f File) (cols []colInfo, err error) {
	defer func() {
		if p := recover(); p != nil {
			cols, err = nil, newError(f.Path, "", panicError("reading the schema", p))
		}
	}()
	fh, err := openPath(f.Path)
	if err != nil {
		return nil, newError(f.Path, "", pathCause(err))
	}
	defer fh.Close()
	fi, err := fh.Stat()
	if err != nil {
		return nil, newError(f.Path, "", pathCause(err))
	}
	size := fi.Size()
	d.Files[i].Size = size
	switch f.Format {
	case Parquet:
		cols, err := d.openParquet(i, fh, size)
		if err == nil && f.Deleted != nil && !f.Deleted.IsEmpty() {
			if n := d.files[i].pq.NumRows(); int64(f.Deleted.Maximum()) >= n {
				return nil, newError(f.Path, "", corruptf("the table deletes row %d of a file with %d rows", f.Deleted.Maximum(), n))
			}
		}
		return cols, err
	case ArrowFile, ArrowStream:
		if f.Deleted != nil {
			return nil, newError(f.Path, "", errors.New("row deletes apply to Parquet files only"))
		}
		return d.openArrow(i, fh, f.Format)
	}
	return nil, newError(f.Path, "", fmt.Errorf("unknown format %d", f.Format))
}

func (d *Dataset) listUnits() {
	for i, f := range d.Files {
		of := &d.files[i]
		switch f.Format {
		case Parquet:
			for g, rg := range of.pq.RowGroups() {
				base := of.rowBase[g]
				u := Unit{File: i, Index: g, Rows: rg.NumRows() - deletedIn(f.Deleted, base, base+rg.NumRows())}
				for _, c := range of.pqCols {
					u.Bytes += columnChunkBytes(of.pq, g, c.leaf)
				}
				d.Units = append(d.Units, u)
			}
		case ArrowFile:
			for b := 0; b < of.batches; b++ {
				d.Units = append(d.Units, Unit{File: i, Index: b, Rows: -1, Bytes: f.Size / int64(of.batches)})
			}
		case ArrowStream:
			d.Units = append(d.Units, Unit{File: i, Rows: -1, Bytes: f.Size})
		}
	}
	for _, u := range d.Units {
		if u.Rows > 0 {
			d.Rows += u.Rows
		}
		d.Bytes += u.Bytes
	}
}

// Dims returns the number of selected columns, the width of a row.
func (d *Dataset) Dims() int { return len(d.Columns) }

// Close releases the footers. UnitReaders opened earlier must be closed by
// their owners; the Dataset holds no open files.
func (d *Dataset) Close() error {
	for i := range d.files {
		d.files[i] = openFile{}
	}
	return nil
}

// Shuffle returns a copy of units in a random order drawn from seed (lake
// files are often sorted, so early units must not all be one region of the
// data). The order depends only on seed and the input order.
func Shuffle(units []Unit, seed uint64) []Unit {
	out := append([]Unit(nil), units...)
	r := rand.New(rand.NewPCG(seed, 0x6b67617567652d73)) // second word: "kgauge-s"
	r.Shuffle(len(out), func(i, j int) { out[i], out[j] = out[j], out[i] })
	return out
}

func find(cols []colInfo, name string) (colInfo, bool) {
	for _, c := range cols {
		if c.name == name {
			return c, true
		}
	}
	return colInfo{}, false
}

// notNumeric is the error for naming column c, which cannot be a feature, in Columns: its type,
// and the reason when the type does not say it ("column is not numeric: string", "column is not
// numeric: list<double> (nested)").
func notNumeric(c colInfo) error {
	if c.reason == "" || c.reason == "not numeric" {
		return fmt.Errorf("%w: its type is %s", ErrNotNumeric, c.typ)
	}
	return fmt.Errorf("%w: its type is %s (%s)", ErrNotNumeric, c.typ, c.reason)
}

// onlyNulls returns the numeric columns that hold only nulls in every file that has them (each
// file a Parquet file whose footer's statistics say so for every row group), and are in at least
// one file with rows.
func onlyNulls(infos [][]colInfo) map[string]bool {
	out := map[string]bool{}
	for _, c := range infos[0] {
		if c.reason != "" || !c.allNull {
			continue
		}
		all := true
		for _, cols := range infos[1:] {
			if o, ok := find(cols, c.name); ok && !o.allNull {
				all = false
				break
			}
		}
		if all {
			out[c.name] = true
		}
	}
	return out
}

func anyHas(infos [][]colInfo, name string) bool {
	for _, cols := range infos {
		if _, ok := find(cols, name); ok {
			return true
		}
	}
	return false
}

// describe lists columns as "a float64, b string, ..." for error messages,
// at most 20 of them.
func describe(cols []colInfo) string {
	var parts []string
	for i, c := range cols {
		if i == 20 {
			parts = append(parts, fmt.Sprintf("... %d more", len(cols)-20))
			break
		}
		parts = append(parts, c.name+" "+c.typ)
	}
	if len(parts) == 0 {
		return "none"
	}
	return strings.Join(parts, ", ")
}
