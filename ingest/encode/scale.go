package encode

import (
	"errors"
	"fmt"
	"math"

	"deltafit/ingest/tabular"
)

// The continuous encodings of a numeric column: one unit holding the value
// standardized (zscore) or scaled to [0,1] (minmax).

var (
	_ = register(tabular.Numeric, ZScore, zscore{})
	_ = register(tabular.Numeric, MinMax, minmax{})
)

// noArgument refuses an argument to an encoding that takes none.
func noArgument(_ *Encoding, _ string, hasArg bool) error {
	if hasArg {
		return errors.New("it takes no argument")
	}
	return nil
}

// checkScale refuses a center or scale that overflowed a float64.
func checkScale(f *Feature) error {
	if math.IsInf(f.Center, 0) || math.IsInf(f.Scale, 0) || math.IsNaN(f.Scale) {
		return fmt.Errorf("the values span more than a 64-bit float holds, which the %s encoding cannot scale; rescale the column or use thermometer", f.Method)
	}
	return nil
}

// validateScale checks the center and scale of a plan read from a file.
func validateScale(f *Feature) error {
	if math.IsNaN(f.Center) || math.IsInf(f.Center, 0) || math.IsNaN(f.Scale) || math.IsInf(f.Scale, 0) {
		return errors.New("center and scale must be finite")
	}
	if f.Scale < 0 {
		return errors.New("the scale must not be negative")
	}
	return nil
}

// zscore: (x − mean)/sd with the training rows' mean and sample sd; 0 for
// a constant column.
type zscore struct{}

func (zscore) parse(e *Encoding, arg string, hasArg bool) error { return noArgument(e, arg, hasArg) }

func (zscore) fit(f *Feature, s *Summary, _ Encoding) error {
	f.Center, f.Scale = s.meanSD()
	return checkScale(f)
}

func (zscore) valueUnits(*Feature) int { return 1 }

func (zscore) unitNames(f *Feature) []string { return []string{f.Column + ":" + f.Method} }

func (zscore) encode(f *Feature, units []float64, col *tabular.Column, row int, _ *Stats) {
	if f.Scale > 0 {
		units[0] = (col.Numbers[row] - f.Center) / f.Scale
	}
}

func (zscore) validate(f *Feature) error { return validateScale(f) }

// minmax: (x − min)/(max − min) with the training rows' range, clipped to
// [0,1]; 0 for a constant column.
type minmax struct{}

func (minmax) parse(e *Encoding, arg string, hasArg bool) error { return noArgument(e, arg, hasArg) }

func (minmax) fit(f *Feature, s *Summary, _ Encoding) error {
	if lo, hi, ok := s.extremes(); ok {
		f.Center, f.Scale = lo, hi-lo
	}
	return checkScale(f)
}

func (minmax) valueUnits(*Feature) int { return 1 }

func (minmax) unitNames(f *Feature) []string { return []string{f.Column + ":" + f.Method} }

func (minmax) encode(f *Feature, units []float64, col *tabular.Column, row int, _ *Stats) {
	if f.Scale > 0 {
		units[0] = min(1, max(0, (col.Numbers[row]-f.Center)/f.Scale))
	}
}

func (minmax) validate(f *Feature) error { return validateScale(f) }
