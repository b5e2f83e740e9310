package kgauge

import (
	"errors"
	"fmt"
	"slices"
	"strings"

	"github.com/kgauge/kgauge/internal/atomicfile"
	"github.com/kgauge/kgauge/sketch"
	"github.com/kgauge/kgauge/stream"
)

// SkippedFile is a data file left out of a run because it cannot be read (Options.SkipUnreadable).
type SkippedFile struct {
	Path   string `json:"path"`
	Reason string `json:"reason"`
}

// ErrSameData means the inputs name the same data twice in a way that cannot be deduplicated: a
// saved sketch together with a data file it was built from, or two sketches built from
// overlapping data. The command line maps it to a usage error.
var ErrSameData = errors.New("kgauge: the same data is named twice")

// SameDataError says which two inputs hold the same data.
type SameDataError struct {
	Input, Other string // the two inputs, in the order given
	Detail       string
}

func (e *SameDataError) Error() string {
	return fmt.Sprintf("%s and %s: %v: %s", e.Input, e.Other, ErrSameData, e.Detail)
}

// Unwrap returns ErrSameData.
func (e *SameDataError) Unwrap() error { return ErrSameData }

// discoverFiles finds the data files named by paths. With opt.SkipUnreadable the files that cannot
// be read, found while discovering or while reading their footers, are left out and returned as
// skipped; without it the first is an error naming it.
func discoverFiles(paths []string, opt Options) ([]stream.File, []SkippedFile, []*stream.Table, error) {
	d, err := discoverInputs(paths, opt, false)
	if err != nil {
		return nil, nil, nil, err
	}
	return d.files, d.skipped, d.tables, nil
}

// discovered is what discoverInputs found.
type discovered struct {
	files    []stream.File
	skipped  []SkippedFile
	tables   []*stream.Table
	sketches []string // saved sketch files found in directories and globs (withSketches)
}

// sketchMagic starts every saved sketch file (sketch.Encode).
const sketchMagic = "KGSKETCH"

// discoverInputs is discoverFiles that, with withSketches, also takes the saved sketch files found
// in directories and globs (and named directly), so that sketches and data files mix freely.
func discoverInputs(paths []string, opt Options, withSketches bool) (*discovered, error) {
	dopt := opt.Tables
	dopt.SkipUnreadable = opt.SkipUnreadable
	if withSketches {
		dopt.SketchMagic = sketchMagic
	}
	d, err := stream.DiscoverWith(paths, dopt)
	if err != nil {
		return nil, err
	}
	files := d.Files
	var skipped []SkippedFile
	for _, s := range d.Skipped {
		skipped = append(skipped, SkippedFile{Path: s.Path, Reason: s.Reason})
	}
	if opt.SkipUnreadable {
		ok, bad := stream.Screen(files)
		files = ok
		for _, s := range bad {
			skipped = append(skipped, SkippedFile{Path: s.Path, Reason: s.Reason})
		}
		slices.SortFunc(skipped, func(a, b SkippedFile) int { return strings.Compare(a.Path, b.Path) })
	}
	if len(files) == 0 && len(skipped) > 0 {
		return nil, &InputError{Path: skipped[0].Path, Err: fmt.Errorf("%w left: all %d data file(s) were skipped as unreadable, this one for: %s",
			stream.ErrNoDataFiles, len(skipped), skipped[0].Reason)}
	}
	return &discovered{files: files, skipped: skipped, tables: d.Tables, sketches: d.Sketches}, nil
}

// contentIDs returns the content identity of every file (stream.ContentID), in order, and fails
// when one of them is that of a data file a sketch in avoid (content identity → sketch path) was
// built from.
func contentIDs(files []stream.File, avoid map[string]string) ([]string, error) {
	ids := make([]string, len(files))
	for i, f := range files {
		id, err := stream.ContentID(f)
		if err != nil {
			return nil, err
		}
		if s, ok := avoid[id]; ok {
			return nil, &SameDataError{Input: s, Other: f.Path,
				Detail: "the sketch was built from this data file; name the sketch or the data, not both"}
		}
		ids[i] = id
	}
	return ids, nil
}

// loadedSketch is a saved sketch input.
type loadedSketch struct {
	path string
	sk   *sketch.Sketch
}

// loadSketches reads the saved sketches, each once: a file named twice (by any name) is read once,
// and a copy of a sketch already read (the same content identities) is left out. A sketch whose
// data overlaps another's is a *SameDataError. It returns the sketches kept and their content
// identities (identity → sketch path).
func loadSketches(paths []string) ([]loadedSketch, map[string]string, error) {
	var out []loadedSketch
	byFile := map[string]bool{}
	bySet := map[string]bool{}
	owner := map[string]string{}
	ownerByCols := map[string]string{}
	for _, p := range paths {
		if k, ok := stream.FileKey(p); ok {
			if byFile[k] {
				continue
			}
			byFile[k] = true
		}
		sk, err := LoadSketch(p)
		if err != nil {
			return nil, nil, err
		}
		ids := slices.Clone(sk.Meta.ContentIDs)
		slices.Sort(ids)
		ids = slices.Compact(ids)
		if len(ids) > 0 {
			// Sketches of other columns of the same files are not copies and do not overlap:
			// merging them fails with what differs.
			cols := strings.Join(sk.Columns(), "\x1f") + "\x1e"
			set := cols + strings.Join(ids, "\n")
			if bySet[set] {
				continue // a copy of a sketch already taken
			}
			for _, id := range ids {
				if q, ok := ownerByCols[cols+id]; ok {
					return nil, nil, &SameDataError{Input: q, Other: p,
						Detail: "the two sketches were built from overlapping data files; merge sketches of disjoint data"}
				}
			}
			bySet[set] = true
			for _, id := range ids {
				ownerByCols[cols+id] = p
				if _, ok := owner[id]; !ok {
					owner[id] = p
				}
			}
		}
		out = append(out, loadedSketch{path: p, sk: sk})
	}
	return out, owner, nil
}

// Output is a file a run will write, named by the flag that asked for it.
type Output struct {
	Flag string // such as "--out"
	Path string
}

// ClashError is an output that is one of the inputs, or the same file as another output.
type ClashError struct {
	Output    Output
	Input     string // the input it would overwrite, or ""
	OtherFlag string // the other output's flag when two outputs clash
	Other     string
}

func (e *ClashError) Error() string {
	if e.Input != "" {
		return fmt.Sprintf("%s %s is the input %s (the same file); an output must never overwrite an input",
			e.Output.Flag, e.Output.Path, e.Input)
	}
	return fmt.Sprintf("%s %s and %s %s are the same file; give each output its own file",
		e.Output.Flag, e.Output.Path, e.OtherFlag, e.Other)
}

// InputKeys returns the identity of every local file the inputs name (data files, those that
// cannot be read included, and saved sketches), identity → the path it was found under. Inputs
// that cannot be listed are left out: the run itself reports them.
func InputKeys(inputs []string) map[string]string {
	keys := map[string]string{}
	add := func(p string) {
		if k, ok := stream.FileKey(p); ok {
			if _, dup := keys[k]; !dup {
				keys[k] = p
			}
		}
	}
	for _, in := range inputs {
		if stream.Remote != nil && stream.Remote.IsRemote(in) {
			continue // an object is never a local output; listing it twice would cost requests
		}
		if isSketchFile(in) {
			add(in)
			continue
		}
		d, err := stream.DiscoverWith([]string{in}, stream.DiscoverOptions{SkipUnreadable: true})
		if err != nil {
			add(in)
			continue
		}
		for _, f := range d.Files {
			add(f.Path)
		}
		for _, s := range d.Skipped {
			add(s.Path)
		}
	}
	return keys
}

// CheckOutputs fails with a *ClashError when an output is the same file as one of the files the
// inputs name (by device and inode, through any symbolic link), or two outputs are one file. Call
// it before anything is read or written.
func CheckOutputs(inputs []string, outputs []Output) error {
	var outs []Output
	for _, o := range outputs {
		if o.Path != "" {
			outs = append(outs, o)
		}
	}
	if len(outs) == 0 {
		return nil
	}
	return CheckOutputKeys(InputKeys(inputs), outs)
}

// CheckOutputKeys is CheckOutputs against input identities from [InputKeys].
func CheckOutputKeys(inputs map[string]string, outputs []Output) error {
	written := map[string]Output{}
	for _, o := range outputs {
		if o.Path == "" {
			continue
		}
		if k, ok := stream.FileKey(o.Path); ok {
			if in, clash := inputs[k]; clash {
				return &ClashError{Output: o, Input: in}
			}
		}
		r, err := atomicfile.Resolve(o.Path)
		if err != nil {
			r = o.Path
		}
		if prev, ok := written[r]; ok {
			return &ClashError{Output: o, OtherFlag: prev.Flag, Other: prev.Path}
		}
		written[r] = o
	}
	return nil
}
