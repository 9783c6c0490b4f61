package encode

import (
	"math"
	"slices"
)

// quantileCuts returns cuts between K bins of equal count. A cut is kept
// only if it splits the training values (min ≤ cut < max) and turns on a
// different set of them than the cut before it, so that no unit is
// constant on the training rows and no two units are the same: a column of
// few distinct values gets at most one unit per gap between consecutive
// distinct values (a 0/1 column: one). A column of two or more distinct
// values always gets at least one cut; a constant column gets none.
func quantileCuts(r ranks, bins int) []float64 {
	if r == nil || r.len() == 0 {
		return nil
	}
	lo, hi := r.min(), r.max()
	if lo == hi {
		return nil
	}
	var cuts []float64
	lastAtOrBelow := -1 // training values at or below the last cut kept
	for k := 1; k < bins; k++ {
		c := quantile(r, float64(k)/float64(bins))
		if c < lo || c >= hi {
			continue
		}
		atOrBelow := r.atOrBelow(c)
		if atOrBelow == lastAtOrBelow {
			continue
		}
		cuts = append(cuts, c)
		lastAtOrBelow = atOrBelow
	}
	if len(cuts) == 0 {
		// Every quantile fell on the maximum: split it from the rest.
		cuts = []float64{r.belowMax()}
	}
	return cuts
}

// countAtOrBelow returns how many of the sorted values are ≤ c.
func countAtOrBelow(sorted []float64, c float64) int {
	i, _ := slices.BinarySearchFunc(sorted, c, func(v, c float64) int {
		if v <= c {
			return -1
		}
		return 1
	})
	return i
}

// belowMax returns the largest of the sorted values under their maximum;
// the values must not all be equal.
func belowMax(sorted []float64) float64 {
	hi := sorted[len(sorted)-1]
	i, _ := slices.BinarySearch(sorted, hi)
	return sorted[i-1]
}

// quantile of ranked values by linear interpolation between order
// statistics (Hyndman & Fan 1996, definition 7).
func quantile(r ranks, q float64) float64 {
	n := r.len()
	pos := q * float64(n-1)
	i := int(pos)
	if i+1 >= n {
		return r.at(n - 1)
	}
	frac := pos - float64(i)
	below, above := r.at(i), r.at(i+1)
	if gap := above - below; !math.IsInf(gap, 0) {
		return below + frac*gap
	}
	// The gap overflows only for values near ±MaxFloat64; the weighted
	// form cannot.
	return below*(1-frac) + above*frac
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
