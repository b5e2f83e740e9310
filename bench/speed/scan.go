// Package speed measures kgauge's throughput and memory against the floor (a bare parquet-go page
// scan of the same file) and against a reference library, side by side in one run.
package speed

import (
	"fmt"
	"io"
	"os"
	"sync"

	"github.com/parquet-go/parquet-go"
)

// ScanResult is what a bare scan read.
type ScanResult struct {
	Rows   int64   `json:"rows"`
	Values int64   `json:"values"`
	Sum    float64 `json:"sum"`
}

// Scan reads every DOUBLE and FLOAT column (list leaves included) of the Parquet file at path page by page with parquet-go, using the
// zero-copy typed view of each decoded page, and sums the values: the cheapest way this library can
// decode the file, and so the floor kgauge's pass is compared with. Row groups are split over
// workers goroutines.
func Scan(path string, workers int) (ScanResult, error) {
	f, err := os.Open(path)
	if err != nil {
		return ScanResult{}, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return ScanResult{}, err
	}
	pf, err := parquet.OpenFile(f, st.Size(), parquet.SkipPageIndex(true), parquet.SkipBloomFilters(true))
	if err != nil {
		return ScanResult{}, fmt.Errorf("%s: %w", path, err)
	}
	rgs := pf.RowGroups()
	parts := make([]ScanResult, workers)
	errs := make([]error, workers)
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			fh, err := os.Open(path)
			if err != nil {
				errs[w] = err
				return
			}
			defer fh.Close()
			for i := w; i < len(rgs); i += workers {
				parts[w].Rows += rgs[i].NumRows()
				for _, cc := range rgs[i].ColumnChunks() {
					fc, ok := cc.(*parquet.FileColumnChunk)
					if !ok || (cc.Type().Kind() != parquet.Double && cc.Type().Kind() != parquet.Float) {
						continue
					}
					pages := fc.PagesFrom(fh)
					for {
						p, err := pages.ReadPage()
						if err == io.EOF {
							break
						}
						if err != nil {
							errs[w] = err
							pages.Close()
							return
						}
						data := p.Data()
						if cc.Type().Kind() == parquet.Float {
							var s0 float32
							f := data.Float()
							for _, x := range f {
								s0 += x
							}
							parts[w].Sum += float64(s0)
							parts[w].Values += int64(len(f))
							parquet.Release(p)
							continue
						}
						v := data.Double()
						var s0, s1, s2, s3 float64
						j := 0
						for ; j+4 <= len(v); j += 4 {
							s0 += v[j]
							s1 += v[j+1]
							s2 += v[j+2]
							s3 += v[j+3]
						}
						for ; j < len(v); j++ {
							s0 += v[j]
						}
						parts[w].Sum += s0 + s1 + s2 + s3
						parts[w].Values += int64(len(v))
						parquet.Release(p)
					}
					pages.Close()
				}
			}
		}()
	}
	wg.Wait()
	var total ScanResult
	for w := range workers {
		if errs[w] != nil {
			return total, fmt.Errorf("%s: %w", path, errs[w])
		}
		total.Rows += parts[w].Rows
		total.Values += parts[w].Values
		total.Sum += parts[w].Sum
	}
	return total, nil
}
