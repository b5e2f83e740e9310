package synth

import (
	"os"
	"runtime"
	"testing"
	"time"
)

func TestBigTmp(t *testing.T) {
	if os.Getenv("SYNTH_BIG") == "" {
		t.Skip()
	}
	o := DefaultMixtureOptions()
	o.Rows = 10_000_000
	o.RowGroup = DefaultRowGroup
	t0 := time.Now()
	if err := WriteMixture("/dev/shm/big.parquet", o); err != nil {
		t.Fatal(err)
	}
	el := time.Since(t0)
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	st, _ := os.Stat("/dev/shm/big.parquet")
	t.Logf("10M rows: %v (%.2fM rows/s), %d MB, heap sys %d MB", el, 1e7/el.Seconds()/1e6, st.Size()>>20, ms.HeapSys>>20)
	os.Remove("/dev/shm/big.parquet")
	lo := DefaultLoadOptions()
	lo.Rows = 2_000_000
	lo.Partitions = 2
	t0 = time.Now()
	if _, err := WriteLoads("/dev/shm/lake", lo); err != nil {
		t.Fatal(err)
	}
	el = time.Since(t0)
	t.Logf("loads 4M rows: %v (%.2fM rows/s)", el, 4e6/el.Seconds()/1e6)
	os.RemoveAll("/dev/shm/lake")
}
