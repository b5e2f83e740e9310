package ledger

import (
	"encoding/json"
	"math"
	"path/filepath"
	"time"

	"github.com/kgauge/kgauge"
)

// SchemaVersion is the version of the record layout written in every record's "schema" field.
// Readers reject records of a later version. Version 2 added status, skipped_files and error; a
// version-1 record is read as status "done". Version 3 added table (the table version or snapshot
// a partition of a Delta Lake or Iceberg table was profiled at) and the files' deleted_rows; a
// record of an earlier version has no table, and a table partition it recorded is compared by
// its files (see [Track]).
const SchemaVersion = 3

// The states of a partition, as in Record.Status. The latest record of a partition is its state.
const (
	// StatusDone: every data file of the partition was read; the partition is not profiled again
	// while its saved sketch exists.
	StatusDone = "done"
	// StatusIncomplete: a verdict from the files that could be read (skipped_files lists the
	// others, --skip-unreadable), or a verdict whose sketch could not be saved (error says so).
	// The partition is profiled again by the next run.
	StatusIncomplete = "incomplete"
	// StatusFailed: the partition could not be profiled (error says why); no verdict. It is
	// profiled again by the next run.
	StatusFailed = "failed"
	// StatusQuarantined: set aside by --quarantine; not read until --release names it.
	StatusQuarantined = "quarantined"
)

// Record is one line of the ledger: what profiling one partition found. The JSON field names are
// a stable contract documented in the README.
type Record struct {
	Schema          int        `json:"schema"`
	Partition       string     `json:"partition"` // KEY=VALUE segments joined by "/", e.g. "day=2026-11-28"
	Status          string     `json:"status"`    // StatusDone, StatusIncomplete, StatusFailed or StatusQuarantined
	PartitionValues []KeyValue `json:"partition_values"`
	Root            string     `json:"root"`  // the lake root, absolute
	Files           []File     `json:"files"` // data files read, relative to Root
	// Table is the table state profiled, for a partition of a Delta Lake or Iceberg table; nil for
	// a hive folder (and in records before schema 3).
	Table *TableState `json:"table,omitempty"`
	// SkippedFiles are the partition's data files that could not be read, relative to Root.
	SkippedFiles []SkippedFile `json:"skipped_files,omitempty"`
	// Error says why the partition failed, was quarantined, or is incomplete beyond skipped files.
	Error       string          `json:"error,omitempty"`
	Rows        int64           `json:"rows"`
	SkippedRows int64           `json:"skipped_rows"`
	ProbeRows   int64           `json:"probe_rows"`
	Columns     []string        `json:"columns"`
	Scale       string          `json:"scale"`
	MinK        int             `json:"min_k"`
	MaxK        int             `json:"max_k"`
	Seed        uint64          `json:"seed"`
	K           int             `json:"k"`
	RunnerUp    *int            `json:"runner_up"`
	Agreement   float64         `json:"agreement"`
	Structure   bool            `json:"structure"`
	Votes       map[string]*int `json:"votes"` // criterion → k, null when it abstained
	PerK        []Scores        `json:"per_k"`
	Sketch      string          `json:"sketch"` // sketch file, relative to the ledger's directory, "/"-separated
	SketchBytes int64           `json:"sketch_bytes"`
	ProfiledAt  string          `json:"profiled_at"` // RFC 3339, UTC
	Timings     Timings         `json:"timings"`
	Version     string          `json:"version"` // kgauge version that wrote the record
	Drift       Drift           `json:"drift"`
}

// KeyValue is one KEY=VALUE segment of a hive-style partition path.
type KeyValue struct {
	Key   string `json:"key"`
	Value string `json:"value"`
}

// File is one data file of a partition.
type File struct {
	Path   string `json:"path"` // relative to the record's Root, "/"-separated
	Format string `json:"format"`
	Bytes  int64  `json:"bytes"`
	// DeletedRows are the rows of the file a lake table's deletion vector or delete files drop
	// (left out of the profile).
	DeletedRows int64 `json:"deleted_rows,omitempty"`
}

// SkippedFile is a data file of a partition that could not be read, with the reason.
type SkippedFile struct {
	Path   string `json:"path"` // relative to the record's Root, "/"-separated
	Reason string `json:"reason"`
}

// Timings are the seconds spent profiling a partition.
type Timings struct {
	Open     float64 `json:"open_seconds"`
	Probe    float64 `json:"probe_seconds"`
	Pass     float64 `json:"pass_seconds"`
	Criteria float64 `json:"criteria_seconds"`
	Total    float64 `json:"total_seconds"` // the whole partition: estimate and sketch write
}

// Scores are the per-k scores kept in the ledger (a subset of the estimate's per_k). Undefined
// values are null.
type Scores struct {
	K                    int   `json:"k"`
	Valid                bool  `json:"valid"`
	WCSS                 Float `json:"wcss"` // in the scaled units of the partition (see Record.Scale)
	Silhouette           Float `json:"silhouette"`
	SimplifiedSilhouette Float `json:"simplified_silhouette"`
	GapBox               Float `json:"gap_box"`
	GapPCA               Float `json:"gap_pca"`
	BICGMM               Float `json:"bic_gmm"`
	AICGMM               Float `json:"aic_gmm"`
	BICKMeans            Float `json:"bic_kmeans"`
	ICLGMM               Float `json:"icl_gmm"`
	WardJump             Float `json:"ward_jump"`
	CalinskiHarabasz     Float `json:"calinski_harabasz"`
	DaviesBouldin        Float `json:"davies_bouldin"`
}

// Float is a float64 that is JSON null when NaN or infinite, and NaN when read from null.
type Float float64

// MarshalJSON writes NaN and ±Inf as null.
func (f Float) MarshalJSON() ([]byte, error) {
	v := float64(f)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return json.Marshal(v)
}

// UnmarshalJSON reads null as NaN.
func (f *Float) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*f = Float(math.NaN())
		return nil
	}
	var v float64
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	*f = Float(v)
	return nil
}

// WCSSPerRow returns the WCSS at k divided by the rows, and false when the record has no valid
// finite WCSS at k.
func (r *Record) WCSSPerRow(k int) (float64, bool) {
	if r.Rows <= 0 {
		return 0, false
	}
	for _, s := range r.PerK {
		if s.K == k {
			w := float64(s.WCSS)
			if math.IsNaN(w) || math.IsInf(w, 0) {
				return 0, false
			}
			return w / float64(r.Rows), true
		}
	}
	return 0, false
}

// NewRecord builds the record of partition p from its estimate. root is the lake root and sketch
// the sketch file's path relative to the ledger's directory; Drift and Timings.Total are left for
// the caller.
func NewRecord(p Partition, root string, res *kgauge.Result, sketch string, sketchBytes int64, at time.Time) Record {
	r := Record{Schema: SchemaVersion, Partition: p.Key, Status: StatusDone, PartitionValues: p.Values, Root: root,
		Files: make([]File, 0, len(res.Files)), Rows: res.Rows, SkippedRows: res.SkippedRows,
		ProbeRows: res.ProbeRows, Columns: res.Columns, Scale: string(res.Scaling.Method),
		MinK: res.MinK, MaxK: res.MaxK, Seed: res.Seed, K: res.K, RunnerUp: res.RunnerUp,
		Agreement: res.Agreement, Structure: res.Structure, Votes: res.Votes,
		PerK: make([]Scores, len(res.PerK)), Sketch: sketch, SketchBytes: sketchBytes,
		ProfiledAt: at.UTC().Format(time.RFC3339), Version: kgauge.Version,
		Timings: Timings{Open: res.Timings.Open, Probe: res.Timings.Probe, Pass: res.Timings.Pass,
			Criteria: res.Timings.Criteria},
		Drift: Drift{Reasons: []Reason{}, WCSSPerRow: Float(math.NaN()), WindowWCSSPerRow: Float(math.NaN())}}
	for _, f := range res.Files {
		r.Files = append(r.Files, File{Path: relTo(root, f.Path), Format: f.Format, Bytes: f.Bytes, DeletedRows: p.DeletedRows[f.Path]})
	}
	r.Table = p.Table
	for _, f := range res.SkippedFiles {
		r.SkippedFiles = append(r.SkippedFiles, SkippedFile{Path: relTo(root, f.Path), Reason: f.Reason})
	}
	if len(r.SkippedFiles) > 0 {
		r.Status = StatusIncomplete
	}
	for i, s := range res.PerK {
		r.PerK[i] = Scores{K: s.K, Valid: s.Valid, WCSS: Float(s.WCSS), Silhouette: Float(s.Silhouette),
			SimplifiedSilhouette: Float(s.SimplifiedSilhouette), GapBox: Float(s.GapBox),
			GapPCA: Float(s.GapPCA), BICGMM: Float(s.BICGMM), AICGMM: Float(s.AICGMM),
			BICKMeans: Float(s.BICKMeans), ICLGMM: Float(s.ICLGMM), WardJump: Float(s.WardJump),
			CalinskiHarabasz: Float(s.CalinskiHarabasz), DaviesBouldin: Float(s.DaviesBouldin)}
	}
	if r.Columns == nil {
		r.Columns = []string{}
	}
	if r.Votes == nil {
		r.Votes = map[string]*int{}
	}
	return r
}

// relTo returns path relative to root, "/"-separated (path itself when it is not below root).
func relTo(root, path string) string {
	rel, err := filepath.Rel(root, path)
	if err != nil {
		rel = path
	}
	return filepath.ToSlash(rel)
}

// newStateRecord is the record of a partition that has no verdict: failed or quarantined.
func newStateRecord(p Partition, root, status, msg string, at time.Time) Record {
	r := Record{Schema: SchemaVersion, Partition: p.Key, Status: status, PartitionValues: p.Values, Root: root,
		Files: []File{}, Table: p.Table, Columns: []string{}, Votes: map[string]*int{}, PerK: []Scores{}, Error: msg,
		ProfiledAt: at.UTC().Format(time.RFC3339), Version: kgauge.Version,
		Drift: Drift{Reasons: []Reason{}, WCSSPerRow: Float(math.NaN()), WindowWCSSPerRow: Float(math.NaN())}}
	for _, f := range p.Files {
		r.Files = append(r.Files, File{Path: relTo(root, f)})
	}
	for _, s := range p.Skipped {
		r.SkippedFiles = append(r.SkippedFiles, SkippedFile{Path: relTo(root, s.Path), Reason: s.Reason})
	}
	return r
}
