package stream_test

import (
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"

	"github.com/parquet-go/parquet-go"

	"github.com/kgauge/kgauge/stream"
)

// fuzzRead opens data as a file of format f and reads every unit. It fails on a hang (10 s) or on
// an allocation far beyond the input; errors are expected. Panics inside the decoding libraries
// are recovered by the readers, so a panic here is a bug in stream.
func fuzzRead(t *testing.T, data []byte, f stream.Format) {
	path := filepath.Join(t.TempDir(), "in")
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	// The read runs in its own goroutine so a hang can be reported; a panic there would kill the
	// fuzzing worker without a message, so it is carried back and reported here.
	done := make(chan any, 1)
	go func() {
		defer func() { done <- recover() }()
		ds, err := stream.Open([]stream.File{{Path: path, Format: f}}, stream.Options{})
		if err != nil {
			return
		}
		// A few bytes of run-length-encoded nulls can validly claim billions of rows; reading them
		// costs time in proportion, and readAll keeps every row twice as a slice, so a million-row
		// claim took seconds per execution under the fuzzer's instrumentation and could hold a
		// worker past -fuzztime ("context deadline exceeded"). Such footers are still opened above;
		// only files of at most 65536 rows (the seeds hold 30 to 40) are read through, and
		// TestHostileParquet reads large claims at the production bounds.
		if ds.Rows > 1<<16 {
			return
		}
		readAll(t, ds, 64)
		// Vector columns are read only when named: name each one too.
		for _, ig := range ds.Ignored {
			if !strings.Contains(ig.Reason, "vector column") {
				continue
			}
			if vs, err := stream.Open([]stream.File{{Path: path, Format: f}}, stream.Options{Columns: []string{ig.Name}}); err == nil && vs.Rows <= 1<<16 {
				readAll(t, vs, 64)
			}
		}
	}()
	select {
	case p := <-done:
		if p != nil {
			t.Fatalf("reading %d bytes as %v panicked: %v", len(data), f, p)
		}
	case <-time.After(10 * time.Second):
		t.Fatalf("reading %d bytes as %v did not finish in 10 s", len(data), f)
	}
	runtime.ReadMemStats(&after)
	if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 300<<20+256*uint64(len(data)) {
		t.Fatalf("reading %d bytes as %v allocated %d bytes", len(data), f, alloc)
	}
}

func seedFile(f *testing.F, write func(path string)) []byte {
	path := filepath.Join(f.TempDir(), "seed")
	write(path)
	data, err := os.ReadFile(path)
	if err != nil {
		f.Fatal(err)
	}
	return data
}

// FuzzParquet: any bytes read as Parquet give rows or an error; no crash, hang or huge allocation.
func FuzzParquet(f *testing.F) {
	f.Add(seedFile(f, func(p string) { writePGo(f, p, newGen(40, 1)) }))
	f.Add(seedFile(f, func(p string) { writePGo(f, p, newGen(40, 2), parquet.Compression(&parquet.Snappy)) }))
	f.Add(seedFile(f, func(p string) { writeArrowParquet(f, p, newGen(30, 3)) }))
	f.Add(seedFile(f, func(p string) { newVecData(30, 3, 1, -1).writeArrowParquet(f, p) }))
	f.Add([]byte("PAR1\x49\xfc\xff\xff\xff\xff\x07\x00\x08\x00\x00\x00PAR1"))
	// Keep each execution fast: at the production bounds a hostile page may decode to a few hundred
	// MiB before it fails (TestHostileParquet covers those bounds).
	f.Cleanup(stream.LimitPagesForFuzzing())
	f.Fuzz(func(t *testing.T, data []byte) { fuzzRead(t, data, stream.Parquet) })
}

// FuzzArrowFile: the same for the Arrow IPC file format.
func FuzzArrowFile(f *testing.F) {
	f.Add(seedFile(f, func(p string) { writeArrowIPC(f, p, newGen(30, 4), 10, true) }))
	f.Add(seedFile(f, func(p string) { newVecData(30, 3, 2, -1).writeArrowIPC(f, p, false, true) }))
	f.Add([]byte("ARROW1\x00\x00\xff\xff\xff\xff\x00\x00\x00\x00ARROW1"))
	f.Fuzz(func(t *testing.T, data []byte) { fuzzRead(t, data, stream.ArrowFile) })
}

// FuzzArrowStream: the same for the Arrow IPC stream format.
func FuzzArrowStream(f *testing.F) {
	f.Add(seedFile(f, func(p string) { writeArrowIPC(f, p, newGen(30, 5), 10, false) }))
	f.Add([]byte("\xff\xff\xff\xff\xf0\xff\xff\x7f0000"))
	f.Fuzz(func(t *testing.T, data []byte) { fuzzRead(t, data, stream.ArrowStream) })
}
