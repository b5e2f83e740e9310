package stream

import (
	"errors"
	"fmt"
	"strings"
)

// Sentinel errors. They are wrapped in a *ReadError that says which file and
// column they concern; test for them with errors.Is.
var (
	// ErrNoDataFiles means a directory or glob pattern matched no data file.
	ErrNoDataFiles = errors.New("stream: no Parquet or Arrow IPC data files")
	// ErrNoNumericColumns means no feature column could be selected.
	ErrNoNumericColumns = errors.New("stream: no numeric columns")
	// ErrInfinite means a selected column holds +Inf or -Inf.
	ErrInfinite = errors.New("stream: infinite value")
	// ErrUnknownColumn means a column named in Options.Columns is in no file.
	ErrUnknownColumn = errors.New("stream: unknown column")
	// ErrNotNumeric means a column named in Options.Columns is not numeric
	// (string, binary, boolean, temporal or nested).
	ErrNotNumeric = errors.New("stream: column is not numeric")
	// ErrMissingColumn means a selected column is absent from one file.
	ErrMissingColumn = errors.New("stream: column missing from file")
	// ErrOnlyNulls means a column named in Options.Columns holds only nulls in every file, as the
	// Parquet footers' statistics say.
	ErrOnlyNulls = errors.New("stream: column holds only nulls")
)

// ReadError says where reading failed. File is the path, Unit the row group or
// record batch index (-1 when unknown), Row the 0-based row index (-1 when
// unknown; for Parquet and Arrow streams it counts from the start of the file,
// for Arrow IPC files from the start of the record batch Unit) and Column the
// column name ("" when unknown). Err is the cause.
type ReadError struct {
	File   string
	Unit   int
	Row    int64
	Column string
	Err    error

	batchRow bool // Row counts from the start of record batch Unit
}

// Error returns one line: `PATH: column "c": row N: cause`, leaving out
// the parts that are unknown. For Arrow IPC file units the row reads
// "batch U row N", because rows are counted within the record batch.
func (e *ReadError) Error() string {
	var b strings.Builder
	if e.File != "" {
		b.WriteString(e.File)
		b.WriteString(": ")
	}
	if e.Column != "" {
		fmt.Fprintf(&b, "column %q: ", e.Column)
	}
	if e.Row >= 0 {
		if e.batchRow {
			fmt.Fprintf(&b, "batch %d row %d: ", e.Unit, e.Row)
		} else {
			fmt.Fprintf(&b, "row %d: ", e.Row)
		}
	}
	cause := "unknown error"
	if e.Err != nil {
		cause = e.Err.Error()
	}
	// Keep the message on one line whatever the decoding library says.
	b.WriteString(strings.Join(strings.Fields(cause), " "))
	return b.String()
}

// Unwrap returns the cause.
func (e *ReadError) Unwrap() error { return e.Err }

// newError returns a *ReadError with unknown unit and row.
func newError(file, column string, err error) *ReadError {
	return &ReadError{File: file, Unit: -1, Row: -1, Column: column, Err: err}
}
