package kgauge

import "sync/atomic"

// Progress is updated by Build as it reads, for a caller that shows progress. Its fields may be read
// from another goroutine at any time.
type Progress struct {
	TotalRows  atomic.Int64 // rows expected, from the files' metadata (0 when unknown)
	TotalBytes atomic.Int64 // bytes of the selected columns, from the metadata
	Rows       atomic.Int64 // rows read so far by the pass
	Bytes      atomic.Int64 // bytes of the units completed so far
	Stage      atomic.Value // string: "open", "probe", "pass", "criteria", "done"
}

func (p *Progress) stage(s string) {
	if p != nil {
		p.Stage.Store(s)
	}
}
