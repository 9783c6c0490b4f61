package encode

import (
	"math"
	"slices"
)

// quantileCuts returns the distinct cuts between K bins of equal count,
// keeping only cuts that split the values (min ≤ cut < max), so that no unit
// is constant on the training rows.
func quantileCuts(values []float64, bins int) []float64 {
	if len(values) == 0 {
		return nil
	}
	sorted := slices.Clone(values)
	slices.Sort(sorted)
	lo, hi := sorted[0], sorted[len(sorted)-1]
	var cuts []float64
	for k := 1; k < bins; k++ {
		c := quantile(sorted, float64(k)/float64(bins))
		if c < lo || c >= hi || (len(cuts) > 0 && c <= cuts[len(cuts)-1]) {
			continue
		}
		cuts = append(cuts, c)
	}
	return cuts
}

// quantile of sorted values by linear interpolation between order
// statistics (Hyndman & Fan 1996, definition 7).
func quantile(sorted []float64, q float64) float64 {
	pos := q * float64(len(sorted)-1)
	i := int(pos)
	if i+1 >= len(sorted) {
		return sorted[len(sorted)-1]
	}
	frac := pos - float64(i)
	if gap := sorted[i+1] - sorted[i]; !math.IsInf(gap, 0) {
		return sorted[i] + frac*gap
	}
	// The gap overflows only for values near ±MaxFloat64; the weighted
	// form cannot.
	return sorted[i]*(1-frac) + sorted[i+1]*frac
}

func median(values []float64) float64 {
	if len(values) == 0 {
		return 0
	}
	sorted := slices.Clone(values)
	slices.Sort(sorted)
	return quantile(sorted, 0.5)
}

func meanSD(values []float64) (mean, sd float64) {
	if len(values) == 0 {
		return 0, 0
	}
	// A constant column has sd 0 exactly; summing would leave rounding
	// (1.4+1.4+1.4)/3 ≠ 1.4, an sd near 1e-16 and units near 1e16.
	if lo := slices.Min(values); lo == slices.Max(values) {
		return lo, 0
	}
	for _, v := range values {
		mean += v
	}
	mean /= float64(len(values))
	if len(values) < 2 {
		return mean, 0
	}
	var ss float64
	for _, v := range values {
		ss += (v - mean) * (v - mean)
	}
	return mean, math.Sqrt(ss / float64(len(values)-1))
}
