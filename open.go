package kgauge

import (
	"fmt"

	"github.com/kgauge/kgauge/stream"
)

// Opened is the one open step of a run, shared by Estimate, PlanUnits (Beam) and the capacity
// planner: the inputs discovered and their footers read, the options after the checks that need
// the footers (too wide, a k range beyond the rows, the read batch capped by the largest unit, the
// --memory fit). No row has been read.
type Opened struct {
	Dataset *stream.Dataset
	Options Options // defaults filled in, capped to the input and fitted to Options.Memory
	Input   *Input  // the files, columns and tables, and the files skipped as unreadable
	Tables  []*stream.Table
}

// Open discovers the data files named by paths, reads their footers and checks opt against them.
// The caller closes Opened.Dataset.
func Open(paths []string, opt Options) (*Opened, error) {
	return open(paths, opt, nil, nil)
}

// open is Open with the discovery of paths when already made (found, or nil) and a check run on the
// discovered files before their footers are read.
func open(paths []string, opt Options, found *discovered, before func([]stream.File) error) (*Opened, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	opt = opt.withDefaults()
	if found == nil {
		var err error
		if found, err = discoverInputs(paths, opt, false); err != nil {
			return nil, err
		}
	}
	files, skipped, tables := found.files, found.skipped, found.tables
	if before != nil {
		if err := before(files); err != nil {
			return nil, err
		}
	}
	ds, err := stream.Open(files, stream.Options{Columns: opt.Columns})
	if err != nil {
		return nil, err
	}
	o, err := checkOpened(ds, opt)
	if err != nil {
		ds.Close()
		return nil, err
	}
	in := describe(ds)
	in.Skipped = skipped
	in.Tables = describeTables(tables, o.Tables.Table.Where)
	return &Opened{Dataset: ds, Options: o, Input: in, Tables: tables}, nil
}

// checkOpened refuses, before the probe, what the footers already show cannot run: more than
// MaxColumns features, a k range larger than the rows, a --memory bound that even the smallest
// sizes exceed (with the figure needed); it caps the read batch and fits the sizes to the bound.
func checkOpened(ds *stream.Dataset, opt Options) (Options, error) {
	if d := ds.Dims(); d > MaxColumns {
		return opt, fmt.Errorf("%w: %d feature columns, more than %d", ErrTooWide, d, MaxColumns)
	}
	opt, err := opt.capToInput(ds)
	if err != nil {
		return opt, err
	}
	return opt.fitMemory(ds)
}
