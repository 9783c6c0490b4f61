package encode

import "deltafit/ingest/tabular"

// The hybrid encoding of a numeric column: the standardized value (as
// zscore) followed by the thermometer units, so a linear trend and steps
// at the quantile cuts can both be learned.

var _ = register(tabular.Numeric, Hybrid, hybrid{})

type hybrid struct{}

func (hybrid) parse(e *Encoding, arg string, hasArg bool) error { return parseBins(e, arg, hasArg) }

func (hybrid) fit(f *Feature, s *Summary, e Encoding) error {
	f.Cuts = quantileCuts(s.ranks(), e.Bins)
	return zscore{}.fit(f, s, e)
}

func (hybrid) valueUnits(f *Feature) int { return 1 + len(f.Cuts) }

func (hybrid) unitNames(f *Feature) []string {
	return append([]string{f.Column + ":" + ZScore}, aboveNames(f)...)
}

func (hybrid) encode(f *Feature, units []float64, col *tabular.Column, row int, stats *Stats) {
	zscore{}.encode(f, units[:1], col, row, stats)
	encodeAbove(f.Cuts, units[1:], col.Numbers[row])
}

func (hybrid) validate(f *Feature) error {
	if err := validateScale(f); err != nil {
		return err
	}
	return validateCuts(f)
}
