package kgauge

import "testing"

// TestParseBytes: binary and decimal suffixes, bare K/M/G/T as binary, and refusals.
func TestParseBytes(t *testing.T) {
	for _, c := range []struct {
		in   string
		want int64
	}{
		{"1048576", 1 << 20}, {"512MiB", 512 << 20}, {"2GiB", 2 << 30}, {"800MB", 800e6},
		{"512M", 512 << 20}, {"2G", 2 << 30}, {"1.5G", 3 << 29}, {"64K", 64 << 10}, {"1T", 1 << 40},
		{"2 GiB", 2 << 30}, {"100B", 100},
	} {
		if got, err := ParseBytes(c.in); err != nil || got != c.want {
			t.Errorf("ParseBytes(%q) = %d, %v; want %d", c.in, got, err, c.want)
		}
	}
	for _, bad := range []string{"", "0", "-1G", "G", "2X", "99999999999TiB", "NaN"} {
		if got, err := ParseBytes(bad); err == nil {
			t.Errorf("ParseBytes(%q) = %d, want an error", bad, got)
		}
	}
}
