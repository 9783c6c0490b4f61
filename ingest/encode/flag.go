package encode

import "deltafit/ingest/tabular"

// The encoding of a boolean column: one unit, on for true.

var _ = register(tabular.Boolean, Flag, flag{})

type flag struct{}

func (flag) parse(e *Encoding, arg string, hasArg bool) error { return noArgument(e, arg, hasArg) }

func (flag) fit(*Feature, *Summary, Encoding) error { return nil }

func (flag) valueUnits(*Feature) int { return 1 }

func (flag) unitNames(f *Feature) []string { return []string{f.Column + ":" + f.Method} }

func (flag) encode(_ *Feature, units []float64, col *tabular.Column, row int, _ *Stats) {
	units[0] = col.Numbers[row]
}

func (flag) validate(*Feature) error { return nil }
