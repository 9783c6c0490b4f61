package ingest

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// plainDecimal never claims a text that strconv.FormatFloat would not
// print back, and claims the common ones, checked against FormatFloat
// itself on edge cases and on random decimals of 1 to 17 digits placed
// anywhere from 1e-30 to 1e20.
func TestPlainDecimalPrintsBack(t *testing.T) {
	printsBack := func(v string) bool {
		x, err := strconv.ParseFloat(v, 64)
		return err == nil && strconv.FormatFloat(x, 'f', -1, 64) == v
	}
	cases := []string{"0", "-0", "1", "-1", "0.5", "-0.5", "10", "123000", "0.000123", "3.14159",
		"999999999999999", "9999999999999999", "0.1", "0.30000000000000004", "1.50", "007", ".5", "5.",
		"+4", "1e3", "-", "", "0.", "00", "-00.1", "1.0", "12345678901234567890",
		"0.0000000000000000000000000000000000001", "0.00000000000000000000000000000000000000001"}
	// Too small for a float64 (read as 0), and subnormal with 15 digits.
	cases = append(cases, "0."+strings.Repeat("0", 330)+"1", "0."+strings.Repeat("0", 315)+"123456789012345")
	rng := rand.New(rand.NewPCG(1, 2))
	for range 20000 {
		digits := 1 + rng.IntN(17)
		mantissa := rng.Int64N(1_000_000_000_000_000_00 / 100)
		s := strconv.FormatInt(mantissa, 10)
		if len(s) > digits {
			s = s[:digits]
		}
		point := rng.IntN(len(s) + 30)
		var v string
		switch {
		case point < len(s):
			v = s[:point] + "." + s[point:]
		default:
			v = s + fmt.Sprintf("%0*d", min(point-len(s), 20), 0)
		}
		if rng.IntN(3) == 0 {
			v = "-" + v
		}
		cases = append(cases, v)
	}
	claimed := 0
	for _, v := range cases {
		if plainDecimal(v) {
			claimed++
			if !printsBack(v) {
				t.Errorf("plainDecimal(%q) is true, but FormatFloat prints %v back otherwise", v, v)
			}
		}
	}
	if claimed < len(cases)/4 {
		t.Errorf("plainDecimal claimed %d of %d texts: the fast path would rarely serve", claimed, len(cases))
	}
	for _, v := range []string{"0.5", "-0", "123000", "3.14159", "0.000123", "999999999999999"} {
		if !plainDecimal(v) {
			t.Errorf("plainDecimal(%q) is false", v)
		}
	}
}

// padded gives back every text padOf measures, and padOf refuses what is
// not the printed number followed by zeros.
func TestPadOfRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for range 5000 {
		x := rng.NormFloat64() * math.Pow(10, float64(rng.IntN(12)-6))
		if rng.IntN(4) == 0 {
			x = math.Round(x)
		}
		printed := strconv.FormatFloat(x, 'f', -1, 64)
		v := printed
		if n := rng.IntN(4); n > 0 {
			if !strings.Contains(v, ".") {
				v += "."
			}
			v += strings.Repeat("0", n)
		}
		pad := padOf(v, []byte(printed))
		if pad < 0 || padded(printed, pad) != v {
			t.Fatalf("%q after %q: pad %d gives %q", v, printed, pad, padded(printed, max(pad, 0)))
		}
	}
	for _, tc := range []struct{ v, printed string }{
		{"1.", "1"}, {"1.5x", "1.5"}, {"01", "1"}, {"1.05", "1.5"}, {"1.0.0", "1"}, {"1e0", "1"},
	} {
		if pad := padOf(tc.v, []byte(tc.printed)); pad >= 0 {
			t.Errorf("padOf(%q, %q) = %d, want −1", tc.v, tc.printed, pad)
		}
	}
}
