package synth

import (
	"math"
	"strings"
	"testing"
)

func TestLoadOptionsValidate(t *testing.T) {
	if err := DefaultLoadOptions().Validate(); err != nil {
		t.Fatalf("defaults invalid: %v", err)
	}
	for _, tc := range []struct {
		name string
		edit func(*LoadOptions)
		want string // substring naming the option
	}{
		{"Rows", func(o *LoadOptions) { o.Rows = 0 }, "rows"},
		{"ArchetypesHigh", func(o *LoadOptions) { o.Archetypes = 9 }, "archetypes must be 1..6, got 9"},
		{"ArchetypesZero", func(o *LoadOptions) { o.Archetypes = 0 }, "archetypes"},
		{"HeatWave", func(o *LoadOptions) { o.HeatWave = 1.5 }, "heat-wave"},
		{"HeatWaveNaN", func(o *LoadOptions) { o.HeatWave = math.NaN() }, "heat-wave"},
		{"Noise", func(o *LoadOptions) { o.Noise = -0.1 }, "noise"},
		{"NullShare", func(o *LoadOptions) { o.NullShare = 2 }, "null-share"},
		{"SharesLen", func(o *LoadOptions) { o.Shares = []float64{1, 2} }, "shares"},
		{"SharesNegative", func(o *LoadOptions) { o.Shares = []float64{1, 2, -1, 1, 1} }, "shares[2]"},
		{"SharesZeroSum", func(o *LoadOptions) { o.Shares = make([]float64, 5) }, "shares"},
		{"Order", func(o *LoadOptions) { o.Order = 7 }, "order"},
		{"Format", func(o *LoadOptions) { o.Format = 9 }, "format"},
		{"Compression", func(o *LoadOptions) { o.Compression = 9 }, "compression"},
		{"RowGroup", func(o *LoadOptions) { o.RowGroup = 0 }, "row-group"},
		{"Partitions", func(o *LoadOptions) { o.Partitions = 0 }, "partitions"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			o := DefaultLoadOptions()
			tc.edit(&o)
			err := o.Validate()
			if err == nil {
				t.Fatal("Validate accepted a bad value")
			}
			msg := err.Error()
			if !strings.HasPrefix(msg, "synth: ") || !strings.Contains(msg, tc.want) || strings.Contains(msg, "\n") {
				t.Errorf("error %q: want a one-line synth: error containing %q", msg, tc.want)
			}
			if _, err := WriteLoads(t.TempDir(), o); err == nil {
				t.Error("WriteLoads accepted the bad options")
			}
		})
	}
}

func TestMixtureOptionsValidate(t *testing.T) {
	if err := DefaultMixtureOptions().Validate(); err != nil {
		t.Fatalf("defaults invalid: %v", err)
	}
	if err := (MixtureOptions{Rows: 10, Dims: 2, K: 2}).Validate(); err != nil {
		t.Fatalf("zero RowGroup and Elongation should mean defaults: %v", err)
	}
	for _, tc := range []struct {
		name string
		edit func(*MixtureOptions)
		want string
	}{
		{"Rows", func(o *MixtureOptions) { o.Rows = -1 }, "rows"},
		{"Dims", func(o *MixtureOptions) { o.Dims = 0 }, "dims"},
		{"K", func(o *MixtureOptions) { o.K = 0 }, "k must"},
		{"KAboveRows", func(o *MixtureOptions) { o.Rows, o.K = 3, 5 }, "k (5)"},
		{"Separation", func(o *MixtureOptions) { o.Separation = math.Inf(1) }, "separation"},
		{"Elongation", func(o *MixtureOptions) { o.Elongation = 0.5 }, "elongation"},
		{"ScaleSpread", func(o *MixtureOptions) { o.ScaleSpread = -1 }, "scale-spread"},
		{"Shares", func(o *MixtureOptions) { o.Shares = []float64{1} }, "shares"},
		{"RowGroup", func(o *MixtureOptions) { o.RowGroup = -5 }, "row-group"},
		{"NullShareNeedsNullable", func(o *MixtureOptions) { o.NullShare = 0.1 }, "nullable"},
		{"NullShare", func(o *MixtureOptions) { o.Nullable, o.NullShare = true, 1.1 }, "null-share"},
		{"Format", func(o *MixtureOptions) { o.Format = 3 }, "format"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			o := DefaultMixtureOptions()
			tc.edit(&o)
			err := o.Validate()
			if err == nil {
				t.Fatal("Validate accepted a bad value")
			}
			if msg := err.Error(); !strings.HasPrefix(msg, "synth: ") || !strings.Contains(msg, tc.want) {
				t.Errorf("error %q: want a synth: error containing %q", msg, tc.want)
			}
			if err := WriteMixture(t.TempDir()+"/m.parquet", o); err == nil {
				t.Error("WriteMixture accepted the bad options")
			}
		})
	}
}

func TestParseNames(t *testing.T) {
	for _, f := range []Format{Parquet, ArrowFile, ArrowStream} {
		if got, err := ParseFormat(f.String()); err != nil || got != f {
			t.Errorf("ParseFormat(%q) = %v, %v", f.String(), got, err)
		}
	}
	for _, c := range []Compression{Snappy, Zstd, None} {
		if got, err := ParseCompression(c.String()); err != nil || got != c {
			t.Errorf("ParseCompression(%q) = %v, %v", c.String(), got, err)
		}
	}
	for _, o := range []Order{Shuffled, Sorted} {
		if got, err := ParseOrder(o.String()); err != nil || got != o {
			t.Errorf("ParseOrder(%q) = %v, %v", o.String(), got, err)
		}
	}
	if _, err := ParseFormat("csv"); err == nil || !strings.Contains(err.Error(), "format") {
		t.Errorf("ParseFormat(csv) error = %v", err)
	}
	if _, err := ParseCompression("lz4"); err == nil || !strings.Contains(err.Error(), "compression") {
		t.Errorf("ParseCompression(lz4) error = %v", err)
	}
	if _, err := ParseOrder("random"); err == nil || !strings.Contains(err.Error(), "order") {
		t.Errorf("ParseOrder(random) error = %v", err)
	}
}

func TestPermutationIsBijection(t *testing.T) {
	for _, n := range []int{1, 2, 3, 7, 64, 1000, 4097} {
		p := newPermutation(n, 42)
		seen := make([]bool, n)
		identity := true
		for i := range n {
			j := p.at(i)
			if j < 0 || j >= n || seen[j] {
				t.Fatalf("n=%d: at(%d)=%d repeats or is out of range", n, i, j)
			}
			seen[j] = true
			identity = identity && i == j
		}
		if n >= 64 && identity {
			t.Errorf("n=%d: permutation is the identity", n)
		}
	}
}

func TestQuotas(t *testing.T) {
	for i, tc := range []struct {
		n    int
		w    []float64
		want []int
	}{
		{10, []float64{1, 1}, []int{5, 5}},
		{10, []float64{1, 1, 1}, []int{4, 3, 3}},
		{7, []float64{0, 1}, []int{0, 7}},
		{100, []float64{0.34, 0.22, 0.12, 0.15, 0.11, 0.06}, []int{34, 22, 12, 15, 11, 6}},
		{3, []float64{0.5, 0, 0.5}, []int{2, 0, 1}},
	} {
		got := quotas(tc.n, tc.w)
		for j := range got {
			if got[j] != tc.want[j] {
				t.Errorf("case %d: quotas(%d, %v) = %v, want %v", i, tc.n, tc.w, got, tc.want)
				break
			}
		}
	}
}
