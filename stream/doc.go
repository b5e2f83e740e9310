// Package stream is the only part of kgauge that knows Parquet or Arrow IPC.
// It finds lake files (Discover), reads their footers and schemas once and
// resolves the feature columns (Open), and then streams float64 rows out of
// independently readable units: a Parquet row group, an Arrow IPC-file record
// batch, or a whole Arrow IPC stream (Dataset.OpenUnit, UnitReader.Read).
//
// Downstream code sees float64 rows, row-major through Read or by column through ReadColumns (the
// pass uses ReadColumns: a float64 page without nulls is handed over as a view, not copied):
//
//	files, err := stream.Discover([]string{"lake/**/*.parquet"})
//	ds, err := stream.Open(files, stream.Options{})
//	defer ds.Close()
//	buf := make([]float64, 4096*ds.Dims())
//	for _, u := range stream.Shuffle(ds.Units, seed) {
//		r, err := ds.OpenUnit(u)
//		for {
//			n, err := r.Read(buf)
//			use(buf[:n*ds.Dims()])
//			if err == io.EOF { break }
//		}
//		r.Close()
//	}
//
// Parquet is decoded at the page level with github.com/parquet-go/parquet-go:
// each selected column chunk of a row group is walked page by page, and the
// typed, already decoded page buffers (Page.Data().Double() and friends, plus
// the definition levels of optional columns) are copied into the row-major
// output through per-column cursors, because pages of different columns end
// at different rows. Dictionary pages are gathered through their dictionary,
// which is converted to float64 once per column chunk. Arrow IPC files and
// streams are read with github.com/apache/arrow/go/v17/arrow/ipc.
//
// Null policy: a row with a null or NaN in any selected column is skipped and
// counted (UnitReader.Skipped). A +Inf or -Inf is an error naming the file,
// the column and the row. Every error about a file or a column is, or wraps,
// a *ReadError.
//
// Hostile files: before the decoding libraries see a file, the claimed
// lengths they would allocate by are checked against the bytes that are there
// (guard.go, guard_arrow.go): the Parquet footer's length and Thrift lists,
// every selected column chunk's extent and page headers (page sizes, value
// counts), the run-length encoded dictionary indexes and definition levels of
// its data pages (whose runs parquet-go expands before it checks them against
// the page's value count), and the Arrow IPC framing (message, body and block lengths, schema
// field and child counts). Arrow buffers are allocated through an allocator
// that refuses sizes beyond a bound derived from the file size. Failures wrap
// ErrCorruptFile.
//
// The package starts no goroutines. A Dataset holds no open file descriptors
// between calls: each UnitReader opens its own *os.File and closes it in
// Close, so many units may be read in parallel from different goroutines.
package stream
