package cliflags

import (
	"flag"
	"math"
	"sort"
	"strconv"
	"time"
)

// Range is the documented range of a numeric flag, inclusive at both ends.
type Range struct {
	Min, Max float64
	Note     string // how the range is shown, e.g. "1 to 1000"
}

// Ranges holds the range of every numeric flag of every kgauge command, by flag name (a name
// means the same in every command that has it). CheckRanges enforces it right after parsing,
// before any file is opened; the README's flag tables list the same figures. The upper bounds keep
// a run's work and memory within what one machine can do: each is at least ten times the
// default, and sizes are further capped by what the input holds.
var Ranges = map[string]Range{
	// The estimate's data flags (estimate, plan, track, demo, kgauge-beam).
	"min-k":          {1, 1000, ""},
	"max-k":          {1, 1000, ""},
	"seed":           {0, math.MaxUint64, "0 to 18446744073709551615"},
	"coreset":        {2, 1 << 22, ""},
	"sample":         {2, 1 << 20, ""},
	"minibatch-rows": {1, 1 << 40, ""},
	"restarts":       {1, 100, ""},
	"anchors":        {1, 100000, ""},
	"gap-refs":       {1, 1000, ""},
	"gap-sample":     {2, 1 << 20, ""},
	"probe-rows":     {1, 1 << 24, ""},
	"batch-rows":     {1, 1 << 20, ""},
	"workers":        {1, 1024, ""},
	// track.
	"window":        {1, 100000, ""},
	"min-history":   {1, 100000, ""},
	"min-agreement": {0, 1, ""},
	"wcss-rise":     {0, 1e6, ""},
	"lock-wait":     {0, float64(24 * time.Hour), "0s to 24h"},
	// synth and demo.
	"rows":       {1, 1e9, ""},
	"archetypes": {1, 6, ""},
	"heat-wave":  {0, 1, ""},
	"noise":      {0, 1e6, ""},
	"nulls":      {0, 1, ""},
	"row-group":  {1, 1 << 26, ""},
	"partitions": {1, 10000, ""},
}

// String writes the range as "MIN to MAX".
func (r Range) String() string {
	if r.Note != "" {
		return r.Note
	}
	return fmtNum(r.Min) + " to " + fmtNum(r.Max)
}

func fmtNum(v float64) string {
	if v == math.Trunc(v) && math.Abs(v) < 1e15 {
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// CheckRanges checks every flag of fs that has a range in [Ranges]; the first value outside its
// range (in the order of the flag names) is a *UsageError naming the flag and the range. Values
// already parsed by the flag package are numbers; durations are compared in nanoseconds.
func CheckRanges(fs *flag.FlagSet) error {
	var names []string
	fs.VisitAll(func(f *flag.Flag) {
		if _, ok := Ranges[f.Name]; ok {
			names = append(names, f.Name)
		}
	})
	sort.Strings(names)
	for _, name := range names {
		f := fs.Lookup(name)
		r := Ranges[name]
		var v float64
		switch g := f.Value.(flag.Getter).Get().(type) {
		case int:
			v = float64(g)
		case int64:
			v = float64(g)
		case uint:
			v = float64(g)
		case uint64:
			v = float64(g)
		case float64:
			v = g
		case time.Duration:
			v = float64(g)
		default:
			continue
		}
		if !(v >= r.Min && v <= r.Max) {
			return usagef("--%s must be %s, got %s", name, r, f.Value.String())
		}
	}
	return nil
}
