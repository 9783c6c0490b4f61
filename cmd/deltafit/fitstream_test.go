package main

import "testing"

// Sizes read as documented in --memory's help: K, M, G, T with B are
// powers of 1000, with iB powers of 1024.
func TestParseSize(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want int64
	}{
		{"1000", 1000},
		{"512MB", 512e6},
		{"4GB", 4e9},
		{"4gb", 4e9},
		{"1.5GiB", 3 << 29},
		{"256 MiB", 256 << 20},
		{"2KiB", 2048},
		{"1TB", 1e12},
	} {
		got, err := parseSize(tc.in)
		if err != nil || got != tc.want {
			t.Errorf("parseSize(%q) = %d, %v; want %d", tc.in, got, err, tc.want)
		}
	}
	for _, bad := range []string{"", "lots", "-1GB", "0", "GB", "1e300TB", "NaNGB"} {
		if _, err := parseSize(bad); err == nil {
			t.Errorf("parseSize(%q) took it", bad)
		}
	}
}
