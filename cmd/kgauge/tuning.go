package main

import (
	"runtime"
	"runtime/debug"

	"github.com/kgauge/kgauge/cost"
)

// tuneRuntime sets the process's collector target (GOGC) to the one the cost model assumes
// (cost.GCPercent, 50) unless a lower one, or GOGC=off, was set. The pass discards decoded pages
// and the criteria their fits' buffers; with the default target (a heap of twice the live data)
// the peak depended on where collections fell, so it varied with the row count. Half the headroom
// keeps it flat and lower, at no measured cost in time (DEVELOPERS.md, measured design
// decisions). It is process-wide, so only main calls it; the library changes no global state.
func tuneRuntime() {
	if old := debug.SetGCPercent(cost.GCPercent); old < cost.GCPercent {
		debug.SetGCPercent(old)
	}
}

// releasePassMemory hands what the pass freed back to the system before the criteria start
// (kgauge.Options.AfterPass): the decoders' page pools survive one collection, so it takes two,
// and then the freed spans are returned. The criteria's working set then starts from the sketch
// alone instead of stacking on the pass's leftovers (DEVELOPERS.md, measured design decisions).
func releasePassMemory() {
	runtime.GC()
	debug.FreeOSMemory()
}
