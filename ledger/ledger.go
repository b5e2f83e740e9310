package ledger

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"github.com/kgauge/kgauge/internal/atomicfile"
)

// Ledger is a ledger file read into memory. Its methods are not safe for concurrent use; hold
// [Lock] across Open and Append so that other processes do not write in between.
type Ledger struct {
	Path    string
	Records []Record
	// Remnant is set when the file ended in an incomplete line: the remnant of an interrupted
	// write, left out of Records and dropped at the next Append.
	Remnant *Remnant

	lines  [][]byte       // the valid lines as read, without their newline, kept byte for byte
	latest map[string]int // partition → index in Records of its latest record
}

// Remnant describes an incomplete last line.
type Remnant struct {
	Line  int // 1-based line number
	Bytes int
	Err   error // why it is not a record
}

func (r *Remnant) String() string {
	return fmt.Sprintf("line %d (%d bytes, no newline) is an incomplete record (%v); dropped, its partition will be profiled again",
		r.Line, r.Bytes, r.Err)
}

// LineError is a ledger line that is not a valid record.
type LineError struct {
	Path string
	Line int // 1-based
	Err  error
}

func (e *LineError) Error() string {
	return fmt.Sprintf("ledger: %s:%d: %v", e.Path, e.Line, e.Err)
}

func (e *LineError) Unwrap() error { return e.Err }

// ErrCorrupt is the cause in a LineError whose line is not a record of a known schema.
var ErrCorrupt = errors.New("ledger: not a valid ledger record")

// Open reads the ledger at path. A missing file is an empty ledger. Any line other than an
// incomplete last one that is not a valid record is a *LineError.
func Open(path string) (*Ledger, error) {
	l := &Ledger{Path: path, latest: map[string]int{}}
	data, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		return l, nil
	}
	if err != nil {
		return nil, fmt.Errorf("ledger: %w", err)
	}
	for n := 1; len(data) > 0; n++ {
		line, rest, terminated := bytes.Cut(data, []byte("\n"))
		data = rest
		if len(bytes.TrimSpace(line)) == 0 {
			if !terminated {
				break
			}
			return nil, &LineError{Path: path, Line: n, Err: fmt.Errorf("%w: empty line", ErrCorrupt)}
		}
		rec, err := parseLine(line)
		if err != nil {
			if !terminated {
				l.Remnant = &Remnant{Line: n, Bytes: len(line), Err: err}
				break
			}
			return nil, &LineError{Path: path, Line: n, Err: err}
		}
		l.lines = append(l.lines, bytes.Clone(line))
		l.Records = append(l.Records, rec)
		l.latest[rec.Partition] = len(l.Records) - 1
	}
	return l, nil
}

func parseLine(line []byte) (Record, error) {
	var rec Record
	dec := json.NewDecoder(bytes.NewReader(line))
	if err := dec.Decode(&rec); err != nil {
		return rec, fmt.Errorf("%w: %v", ErrCorrupt, err)
	}
	if dec.More() {
		return rec, fmt.Errorf("%w: text after the record", ErrCorrupt)
	}
	switch {
	case rec.Schema < 1:
		return rec, fmt.Errorf("%w: no schema version", ErrCorrupt)
	case rec.Schema > SchemaVersion:
		return rec, fmt.Errorf("%w: schema %d is newer than this kgauge (%d)", ErrCorrupt, rec.Schema, SchemaVersion)
	case rec.Partition == "":
		return rec, fmt.Errorf("%w: no partition", ErrCorrupt)
	}
	switch rec.Status {
	case "":
		rec.Status = StatusDone // schema 1, or written without one: a verdict
	case StatusDone, StatusIncomplete, StatusFailed, StatusQuarantined:
	default:
		return rec, fmt.Errorf("%w: unknown status %q", ErrCorrupt, rec.Status)
	}
	return rec, nil
}

// Has reports whether the partition key is done: its latest record has status done.
func (l *Ledger) Has(partition string) bool {
	r := l.Latest(partition)
	return r != nil && r.Status == StatusDone
}

// Latest returns the latest record of the partition key, its state, or nil.
func (l *Ledger) Latest(partition string) *Record {
	i, ok := l.latest[partition]
	if !ok {
		return nil
	}
	return &l.Records[i]
}

// History returns the records drift is checked against: for every partition whose latest record
// is done, that record, in ledger order.
func (l *Ledger) History() []Record {
	var out []Record
	for i, r := range l.Records {
		if r.Status == StatusDone && l.latest[r.Partition] == i {
			out = append(out, r)
		}
	}
	return out
}

// Append adds rec to the ledger: the earlier records byte for byte and the new one are written to
// a temporary file, synced and renamed over the ledger, so the file holds either the old records or
// all of them. An incomplete remnant is dropped.
func (l *Ledger) Append(rec Record) error {
	line, err := json.Marshal(rec)
	if err != nil {
		return fmt.Errorf("ledger: %s: %w", l.Path, err)
	}
	err = atomicfile.Write(l.Path, 0o644, func(w io.Writer) error {
		for _, b := range append(l.lines, line) {
			if _, err := w.Write(b); err != nil {
				return err
			}
			if _, err := w.Write([]byte("\n")); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return fmt.Errorf("ledger: %w", err)
	}
	l.lines = append(l.lines, line)
	l.Records = append(l.Records, rec)
	l.latest[rec.Partition] = len(l.Records) - 1
	l.Remnant = nil
	return nil
}

// SketchDir returns the directory of the saved sketches: the ledger's path with ".sketches".
func SketchDir(ledgerPath string) string { return ledgerPath + ".sketches" }

// SketchPath returns where the sketch of the partition key is saved, as a path and as the
// "/"-separated path relative to the ledger's directory that the record holds.
func SketchPath(ledgerPath, partition string) (path, rel string) {
	rel = filepath.Base(ledgerPath) + ".sketches/" + partition + ".kgs"
	return filepath.Join(filepath.Dir(ledgerPath), filepath.FromSlash(rel)), rel
}

// RemoveTemps deletes the temporary files an interrupted write left beside the ledger and among
// its sketches, and returns their paths. Call it only while holding the lock.
func RemoveTemps(ledgerPath string) ([]string, error) {
	var removed []string
	dir, base := filepath.Dir(ledgerPath), filepath.Base(ledgerPath)
	ents, err := os.ReadDir(dir)
	if err != nil && !errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("ledger: %w", err)
	}
	for _, e := range ents {
		if !e.IsDir() && strings.HasPrefix(e.Name(), "."+base+".tmp-") {
			p := filepath.Join(dir, e.Name())
			if err := os.Remove(p); err != nil {
				return removed, fmt.Errorf("ledger: %w", err)
			}
			removed = append(removed, p)
		}
	}
	sk := SketchDir(ledgerPath)
	err = filepath.WalkDir(sk, func(p string, e fs.DirEntry, err error) error {
		if err != nil {
			if errors.Is(err, fs.ErrNotExist) && p == sk {
				return nil
			}
			return err
		}
		if !e.IsDir() && strings.HasPrefix(e.Name(), ".") && strings.Contains(e.Name(), ".kgs.tmp-") {
			if err := os.Remove(p); err != nil {
				return err
			}
			removed = append(removed, p)
		}
		return nil
	})
	if err != nil {
		return removed, fmt.Errorf("ledger: %w", err)
	}
	return removed, nil
}
