package encode

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"

	"deltafit/ingest/tabular"
)

// The encodings of a numeric column by cuts: thermometer and one-hot bins
// between quantile cuts, and a single threshold.

var (
	_ = register(tabular.Numeric, Thermometer, thermometer{})
	_ = register(tabular.Numeric, OneHot, bins{})
	_ = register(tabular.Numeric, Threshold, threshold{})
)

// parseBins reads the bin count K of thermometer[:K] and onehot[:K].
func parseBins(e *Encoding, arg string, hasArg bool) error {
	e.Bins = DefaultBins
	if hasArg {
		k, err := strconv.Atoi(arg)
		if err != nil || k < 2 || k > MaxBins {
			return fmt.Errorf("bins must be a whole number from 2 to %d", MaxBins)
		}
		e.Bins = k
	}
	return nil
}

// validateCuts checks that cuts are finite, increasing and within the cap.
func validateCuts(f *Feature) error {
	if len(f.Cuts) > MaxBins {
		return fmt.Errorf("%d cuts, over the cap of %d", len(f.Cuts), MaxBins)
	}
	for i, c := range f.Cuts {
		if math.IsNaN(c) || math.IsInf(c, 0) || (i > 0 && c <= f.Cuts[i-1]) {
			return errors.New("cuts must be finite and increasing")
		}
	}
	return nil
}

func formatCut(c float64) string { return strconv.FormatFloat(c, 'g', 6, 64) }

// thermometer: unit k is on when the value is above cut k, so a value
// turns on every unit up to its level.
type thermometer struct{}

func (thermometer) parse(e *Encoding, arg string, hasArg bool) error {
	return parseBins(e, arg, hasArg)
}

func (thermometer) fit(f *Feature, s *Summary, e Encoding) error {
	f.Cuts = quantileCuts(s.ranks(), e.Bins)
	return nil
}

func (thermometer) valueUnits(f *Feature) int { return len(f.Cuts) }

func (thermometer) unitNames(f *Feature) []string { return aboveNames(f) }

func (thermometer) encode(f *Feature, units []float64, col *tabular.Column, row int, _ *Stats) {
	encodeAbove(f.Cuts, units, col.Numbers[row])
}

func (thermometer) validate(f *Feature) error { return validateCuts(f) }

// aboveNames names one unit per cut, "column>cut".
func aboveNames(f *Feature) []string {
	names := make([]string, len(f.Cuts))
	for i, c := range f.Cuts {
		names[i] = f.Column + ">" + formatCut(c)
	}
	return names
}

// encodeAbove turns on the unit of every cut below x.
func encodeAbove(cuts, units []float64, x float64) {
	for i, c := range cuts {
		if x <= c {
			break
		}
		units[i] = 1
	}
}

// bins: one unit per bin between consecutive cuts, exactly one on.
type bins struct{}

func (bins) parse(e *Encoding, arg string, hasArg bool) error { return parseBins(e, arg, hasArg) }

func (bins) fit(f *Feature, s *Summary, e Encoding) error {
	f.Cuts = quantileCuts(s.ranks(), e.Bins)
	return nil
}

func (bins) valueUnits(f *Feature) int { return len(f.Cuts) + 1 }

func (bins) unitNames(f *Feature) []string {
	names := make([]string, 0, len(f.Cuts)+1)
	lower := "-inf"
	for _, c := range f.Cuts {
		names = append(names, fmt.Sprintf("%s in (%s,%s]", f.Column, lower, formatCut(c)))
		lower = formatCut(c)
	}
	return append(names, fmt.Sprintf("%s in (%s,+inf)", f.Column, lower))
}

func (bins) encode(f *Feature, units []float64, col *tabular.Column, row int, _ *Stats) {
	units[sort.SearchFloat64s(f.Cuts, col.Numbers[row])] = 1
}

func (bins) validate(f *Feature) error { return validateCuts(f) }

// threshold: one unit, on above a cut given by the user or, by default,
// the training median.
type threshold struct{}

func (threshold) parse(e *Encoding, arg string, hasArg bool) error {
	if !hasArg {
		return nil
	}
	v, err := strconv.ParseFloat(arg, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return errors.New("the threshold must be a finite number")
	}
	e.Cut = &v
	return nil
}

func (threshold) fit(f *Feature, s *Summary, e Encoding) error {
	if e.Cut != nil {
		f.Cuts = []float64{*e.Cut}
		return nil
	}
	cut := 0.0
	if r := s.ranks(); r != nil && r.len() > 0 {
		cut = quantile(r, 0.5)
		if cut >= r.max() && r.min() < cut {
			// The median is the maximum (most values are): a cut there
			// would leave the unit off on every training row.
			cut = r.belowMax()
		}
	}
	f.Cuts = []float64{cut}
	return nil
}

func (threshold) valueUnits(f *Feature) int { return len(f.Cuts) }

func (threshold) unitNames(f *Feature) []string { return aboveNames(f) }

func (threshold) encode(f *Feature, units []float64, col *tabular.Column, row int, _ *Stats) {
	encodeAbove(f.Cuts, units, col.Numbers[row])
}

func (threshold) validate(f *Feature) error {
	if len(f.Cuts) != 1 {
		return fmt.Errorf("a threshold has one cut, not %d", len(f.Cuts))
	}
	return validateCuts(f)
}
