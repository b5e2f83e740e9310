package synth

import (
	"fmt"
	"math"
	"time"
)

// Format is the file format written by [WriteLoads] and [WriteMixture].
// The zero value is [Parquet].
type Format uint8

// The supported formats.
const (
	Parquet     Format = iota // Apache Parquet (.parquet)
	ArrowFile                 // Arrow IPC file format (.arrow)
	ArrowStream               // Arrow IPC streaming format (.arrows)
)

var formatNames = [...]string{"parquet", "arrow-file", "arrow-stream"}

// String returns the name of f: "parquet", "arrow-file" or "arrow-stream".
func (f Format) String() string {
	if int(f) < len(formatNames) {
		return formatNames[f]
	}
	return fmt.Sprintf("Format(%d)", uint8(f))
}

// Ext returns the file extension (without the dot) used for f.
func (f Format) Ext() string {
	switch f {
	case ArrowFile:
		return "arrow"
	case ArrowStream:
		return "arrows"
	default:
		return "parquet"
	}
}

// ParseFormat returns the Format named s ("parquet", "arrow-file" or "arrow-stream";
// "arrow" and "arrows" are accepted as the extensions).
func ParseFormat(s string) (Format, error) {
	switch s {
	case "parquet":
		return Parquet, nil
	case "arrow-file", "arrow":
		return ArrowFile, nil
	case "arrow-stream", "arrows":
		return ArrowStream, nil
	}
	return 0, fmt.Errorf("synth: format must be parquet, arrow-file or arrow-stream, got %q", s)
}

// Compression is the Parquet compression codec. It is ignored for Arrow IPC output.
// The zero value is [Snappy].
type Compression uint8

// The supported codecs.
const (
	Snappy Compression = iota
	Zstd
	None
)

var compressionNames = [...]string{"snappy", "zstd", "none"}

// String returns the name of c: "snappy", "zstd" or "none".
func (c Compression) String() string {
	if int(c) < len(compressionNames) {
		return compressionNames[c]
	}
	return fmt.Sprintf("Compression(%d)", uint8(c))
}

// ParseCompression returns the Compression named s ("snappy", "zstd" or "none").
func ParseCompression(s string) (Compression, error) {
	for i, n := range compressionNames {
		if s == n {
			return Compression(i), nil
		}
	}
	return 0, fmt.Errorf("synth: compression must be snappy, zstd or none, got %q", s)
}

// Order is the order of rows in a generated file. The zero value is [Shuffled].
type Order uint8

// The supported orders.
const (
	// Shuffled puts rows in a seeded pseudo-random order.
	Shuffled Order = iota
	// Sorted groups rows by cluster (archetype), as a lake sorted by an id may be.
	Sorted
)

var orderNames = [...]string{"shuffled", "sorted"}

// String returns the name of o: "shuffled" or "sorted".
func (o Order) String() string {
	if int(o) < len(orderNames) {
		return orderNames[o]
	}
	return fmt.Sprintf("Order(%d)", uint8(o))
}

// ParseOrder returns the Order named s ("shuffled" or "sorted").
func ParseOrder(s string) (Order, error) {
	for i, n := range orderNames {
		if s == n {
			return Order(i), nil
		}
	}
	return 0, fmt.Errorf("synth: order must be shuffled or sorted, got %q", s)
}

// Defaults of [LoadOptions] and [MixtureOptions].
const (
	DefaultRows       = 200_000
	DefaultArchetypes = 5
	DefaultNoise      = 0.12
	DefaultNullShare  = 0.01
	DefaultRowGroup   = 65_536
	DefaultPartitions = 1
)

// DefaultStart is the first day of the demo lake.
var DefaultStart = time.Date(2026, 11, 28, 0, 0, 0, 0, time.UTC)

// maxRows bounds Rows so that row indices and meter ids stay well inside int64 and the
// shuffling permutation; it is far beyond what a disk holds at 27 columns a row.
const maxRows = 1 << 40

// LoadOptions configures the demo scenario generator ([WriteLoads], [Loads]).
//
// Fields are taken literally, so start from [DefaultLoadOptions] and change what is
// needed. Only Start has a zero-value default (the zero time means [DefaultStart]).
type LoadOptions struct {
	Rows        int         // rows (meters) per partition
	Archetypes  int         // 1..6 usage archetypes, in the order of [ArchetypeNames]
	HeatWave    float64     // share of homes (0..1) given the 7th archetype, afternoon air-conditioning
	Noise       float64     // sd of per-hour noise in kWh
	NullShare   float64     // share of rows with a meter outage leaving 1-6 consecutive hours null
	Shares      []float64   // relative share of each archetype (len Archetypes); nil = [DefaultShares]
	Order       Order       // Shuffled or Sorted (by archetype; meter ids sort the same way)
	Format      Format      // Parquet, ArrowFile or ArrowStream
	Compression Compression // Snappy, Zstd or None (Parquet only)
	RowGroup    int         // rows per Parquet row group / Arrow record batch
	Partitions  int         // number of day partitions
	Start       time.Time   // first day (the date in UTC is used); zero = DefaultStart
	Seed        uint64
}

// DefaultLoadOptions returns the options of the standard demo: 200,000 meters on one
// day, five archetypes with the unbalanced [DefaultShares], noise 0.12 kWh, 1 % of rows
// with an outage, shuffled, Snappy Parquet with 65,536-row row groups.
func DefaultLoadOptions() LoadOptions {
	return LoadOptions{
		Rows:       DefaultRows,
		Archetypes: DefaultArchetypes,
		Noise:      DefaultNoise,
		NullShare:  DefaultNullShare,
		RowGroup:   DefaultRowGroup,
		Partitions: DefaultPartitions,
		Start:      DefaultStart,
		Seed:       1,
	}
}

// DefaultShares returns the default relative shares of the six archetypes: commuters
// largest and small shops smallest. For fewer archetypes the first ones are used
// (relative shares need not sum to 1).
func DefaultShares() []float64 {
	return []float64{0.34, 0.22, 0.12, 0.15, 0.11, 0.06}
}

// Validate reports the first invalid option as a one-line error naming it.
func (o LoadOptions) Validate() error {
	switch {
	case o.Rows < 1 || o.Rows > maxRows:
		return fmt.Errorf("synth: rows must be 1..%d, got %d", int64(maxRows), o.Rows)
	case o.Archetypes < 1 || o.Archetypes > 6:
		return fmt.Errorf("synth: archetypes must be 1..6, got %d", o.Archetypes)
	case !(o.HeatWave >= 0 && o.HeatWave <= 1):
		return fmt.Errorf("synth: heat-wave must be in [0, 1], got %v", o.HeatWave)
	case !(o.Noise >= 0 && o.Noise <= 100):
		return fmt.Errorf("synth: noise must be in [0, 100] kWh, got %v", o.Noise)
	case !(o.NullShare >= 0 && o.NullShare <= 1):
		return fmt.Errorf("synth: null-share must be in [0, 1], got %v", o.NullShare)
	case o.Order > Sorted:
		return fmt.Errorf("synth: order must be shuffled or sorted, got %v", o.Order)
	case o.Format > ArrowStream:
		return fmt.Errorf("synth: format must be parquet, arrow-file or arrow-stream, got %v", o.Format)
	case o.Compression > None:
		return fmt.Errorf("synth: compression must be snappy, zstd or none, got %v", o.Compression)
	case o.RowGroup < 1:
		return fmt.Errorf("synth: row-group must be at least 1, got %d", o.RowGroup)
	case o.Partitions < 1 || o.Partitions > 100_000:
		return fmt.Errorf("synth: partitions must be 1..100000, got %d", o.Partitions)
	}
	if o.Shares != nil {
		if err := checkShares(o.Shares, o.Archetypes, "archetypes"); err != nil {
			return err
		}
	}
	return nil
}

// checkShares validates a share vector of length n; what names the option giving n.
func checkShares(s []float64, n int, what string) error {
	if len(s) != n {
		return fmt.Errorf("synth: shares must have one value per %s (%d), got %d", what, n, len(s))
	}
	sum := 0.0
	for i, v := range s {
		if !(v >= 0) || math.IsInf(v, 0) {
			return fmt.Errorf("synth: shares[%d] must be a finite value >= 0, got %v", i, v)
		}
		sum += v
	}
	if !(sum > 0) || math.IsInf(sum, 0) {
		return fmt.Errorf("synth: shares must have a positive finite sum, got %v", sum)
	}
	return nil
}

// MixtureOptions configures a Gaussian-mixture workload ([Mixture], [WriteMixture]).
//
// Each cluster has sd 1 in every direction before Elongation and ScaleSpread are applied.
// With K <= Dims the centres are the vertices of a randomly rotated regular simplex, so
// every pair of centres is exactly Separation apart; with K > Dims they are random and
// rescaled so that the closest pair is Separation apart.
//
// Zero values of RowGroup and Elongation mean their defaults (65,536 and 1); the other
// fields are taken literally. Use [DefaultMixtureOptions] for a standard workload.
type MixtureOptions struct {
	Rows, Dims, K int
	Separation    float64     // distance between centres in units of the cluster sd
	Shares        []float64   // relative cluster shares (len K); nil = balanced
	Elongation    float64     // 1 = spherical; >1 gives each cluster sd Elongation along a random direction
	ScaleSpread   float64     // 0 = same scale; s>0 multiplies column j by 10^U(-s,s)
	Seed          uint64      //
	Format        Format      // Parquet, ArrowFile or ArrowStream
	Compression   Compression // Parquet only
	RowGroup      int         // rows per Parquet row group / Arrow record batch
	Order         Order       // Shuffled, or Sorted (rows grouped by cluster)
	Nullable      bool        // write OPTIONAL (nullable) columns; default REQUIRED
	NullShare     float64     // with Nullable: share of values that are null (NaN in memory)
	Vector        string      // when set, each row's Dims values are one list<float32> column of this name
}

// DefaultMixtureOptions returns a benchmark-sized workload: 1,000,000 rows, 16 columns,
// 10 balanced spherical clusters 6 sd apart, Snappy Parquet, shuffled.
func DefaultMixtureOptions() MixtureOptions {
	return MixtureOptions{Rows: 1_000_000, Dims: 16, K: 10, Separation: 6, Elongation: 1,
		RowGroup: DefaultRowGroup, Seed: 1}
}

// Validate reports the first invalid option as a one-line error naming it.
func (o MixtureOptions) Validate() error {
	switch {
	case o.Rows < 1 || o.Rows > maxRows:
		return fmt.Errorf("synth: rows must be 1..%d, got %d", int64(maxRows), o.Rows)
	case o.Dims < 1 || o.Dims > 1000:
		return fmt.Errorf("synth: dims must be 1..1000, got %d", o.Dims)
	case o.K < 1 || o.K > 10_000:
		return fmt.Errorf("synth: k must be 1..10000, got %d", o.K)
	case !(o.Separation >= 0) || math.IsInf(o.Separation, 0):
		return fmt.Errorf("synth: separation must be a finite value >= 0, got %v", o.Separation)
	case o.Elongation != 0 && !(o.Elongation >= 1 && o.Elongation <= 1e6):
		return fmt.Errorf("synth: elongation must be in [1, 1e6] (0 means 1), got %v", o.Elongation)
	case !(o.ScaleSpread >= 0 && o.ScaleSpread <= 30):
		return fmt.Errorf("synth: scale-spread must be in [0, 30], got %v", o.ScaleSpread)
	case o.Order > Sorted:
		return fmt.Errorf("synth: order must be shuffled or sorted, got %v", o.Order)
	case o.Format > ArrowStream:
		return fmt.Errorf("synth: format must be parquet, arrow-file or arrow-stream, got %v", o.Format)
	case o.Compression > None:
		return fmt.Errorf("synth: compression must be snappy, zstd or none, got %v", o.Compression)
	case o.RowGroup < 0:
		return fmt.Errorf("synth: row-group must be at least 1 (0 means %d), got %d", DefaultRowGroup, o.RowGroup)
	case !(o.NullShare >= 0 && o.NullShare <= 1):
		return fmt.Errorf("synth: null-share must be in [0, 1], got %v", o.NullShare)
	case o.NullShare > 0 && !o.Nullable:
		return fmt.Errorf("synth: null-share %v needs nullable columns", o.NullShare)
	case o.Vector != "" && (o.Nullable || o.Dims > 1<<16):
		return fmt.Errorf("synth: a vector column has no nulls and at most 65536 values a row")
	case o.K > 1 && o.K > o.Rows:
		return fmt.Errorf("synth: k (%d) must not exceed rows (%d)", o.K, o.Rows)
	}
	if o.Shares != nil {
		return checkShares(o.Shares, o.K, "cluster")
	}
	return nil
}

func (o MixtureOptions) rowGroup() int {
	if o.RowGroup == 0 {
		return DefaultRowGroup
	}
	return o.RowGroup
}

func (o MixtureOptions) elongation() float64 {
	if o.Elongation == 0 {
		return 1
	}
	return o.Elongation
}
