package encode

import (
	"fmt"
	"strconv"
	"strings"

	"deltafit/ingest/tabular"
)

// Encoding method names, as a Feature records them and the flags take them.
// OneHot names both the quantile bins of a numeric column and the
// category units of a categorical one; the column's kind tells them apart.
const (
	Thermometer = "thermometer" // numeric: K quantile bins; unit k is on when x is above the k-th cut
	OneHot      = "onehot"      // numeric: K quantile bins, one unit on; categorical: one unit per category and "other"
	Threshold   = "threshold"   // numeric: one unit, on when x is above a cut (default: training median)
	ZScore      = "zscore"      // numeric: (x − mean)/sd, continuous and not bounded to [0,1]
	MinMax      = "minmax"      // numeric: (x − min)/(max − min), clipped to [0,1]
	Flag        = "flag"        // boolean: one unit, on for true
	Hybrid      = "hybrid"      // numeric: the zscore unit, then the thermometer units
	// Auto is not an encoding of its own: a learner chooses, on its
	// training rows, among AutoCandidates and fits the plan with the best.
	Auto = "auto"
)

// OneHotBins is the numeric one-hot encoding; it is OneHot.
//
// Deprecated: use OneHot; the column's kind tells the two apart.
const OneHotBins = OneHot

// Defaults and caps of the encodings.
const (
	DefaultBins   = 8
	MaxBins       = 256
	MaxCategories = 1000 // per categorical column, after dropping rare values
)

// Encoding is a parsed encoding choice such as "thermometer:8" or "onehot:5".
type Encoding struct {
	Method string
	Bins   int      // thermometer and onehot bins
	Cut    *float64 // threshold; nil means the training median
	Min    int      // categorical onehot: least count for a category to get its own unit
}

// method is one encoding of one column kind: everything the package does
// that depends on the encoding goes through it. Each method lives in its own
// file and registers itself there, so adding an encoding touches one file.
type method interface {
	// parse reads the argument after "name:" (hasArg false when there
	// is none) into e, whose Method is already set.
	parse(e *Encoding, arg string, hasArg bool) error
	// fit sets the fitted parameters of f (cuts, center and scale,
	// categories) from the summary of the training rows.
	fit(f *Feature, s *Summary, e Encoding) error
	// valueUnits is the number of units the values take (without the
	// missing-indicator unit).
	valueUnits(f *Feature) int
	// unitNames names the value units.
	unitNames(f *Feature) []string
	// encode writes the present cell of row into units, which arrive
	// zeroed; stats counts what the plan was not fitted on.
	encode(f *Feature, units []float64, col *tabular.Column, row int, stats *Stats)
	// validate checks the fitted parameters of a plan read from a file.
	validate(f *Feature) error
}

type methodKey struct {
	kind tabular.Kind
	name string
}

// methods holds every registered method, by column kind and name.
var methods = map[methodKey]method{}

// register adds m under kind and name; it is called once per method from
// the method's file.
func register(kind tabular.Kind, name string, m method) bool {
	methods[methodKey{kind, name}] = m
	return true
}

// lookup returns the method of a column kind by name.
func lookup(kind tabular.Kind, name string) (method, bool) {
	m, ok := methods[methodKey{kind, name}]
	return m, ok
}

// ParseNumericEncoding parses auto[:K], thermometer[:K], onehot[:K],
// threshold[:V], zscore, minmax or hybrid[:K].
func ParseNumericEncoding(s string) (Encoding, error) {
	const want = "auto[:K], thermometer[:K], onehot[:K], threshold[:V], zscore, minmax or hybrid[:K]"
	if name, arg, hasArg := strings.Cut(s, ":"); name == Auto {
		e := Encoding{Method: Auto}
		if err := parseBins(&e, arg, hasArg); err != nil {
			return e, fmt.Errorf("ingest: numeric encoding %q: %w", s, err)
		}
		return e, nil
	}
	return parseEncoding(tabular.Numeric, s, want)
}

// AutoCandidates are the numeric encodings an auto encoding chooses among,
// in the order that breaks ties (fewer units first): one standardized unit
// per column, thermometer:K, and hybrid:K, K from auto:K.
func AutoCandidates(auto Encoding) []Encoding {
	bins := auto.Bins
	if bins == 0 {
		bins = DefaultBins
	}
	return []Encoding{{Method: ZScore}, {Method: Thermometer, Bins: bins}, {Method: Hybrid, Bins: bins}}
}

// String formats e as the flags take it.
func (e Encoding) String() string {
	switch {
	case e.Method == Thermometer || e.Method == Hybrid || e.Method == Auto || (e.Method == OneHot && e.Min == 0):
		return fmt.Sprintf("%s:%d", e.Method, e.Bins)
	case e.Method == OneHot:
		return fmt.Sprintf("%s:%d", e.Method, e.Min)
	case e.Method == Threshold && e.Cut != nil:
		return fmt.Sprintf("%s:%s", e.Method, strconv.FormatFloat(*e.Cut, 'g', -1, 64))
	}
	return e.Method
}

// ParseCategoricalEncoding parses onehot[:MIN].
func ParseCategoricalEncoding(s string) (Encoding, error) {
	return parseEncoding(tabular.Categorical, s, "onehot[:MIN]")
}

func parseEncoding(kind tabular.Kind, s, want string) (Encoding, error) {
	name, arg, hasArg := strings.Cut(s, ":")
	m, ok := lookup(kind, name)
	if !ok {
		return Encoding{}, fmt.Errorf("ingest: unknown %s encoding %q (want %s)", kind, s, want)
	}
	e := Encoding{Method: name}
	if err := m.parse(&e, arg, hasArg); err != nil {
		return e, fmt.Errorf("ingest: %s encoding %q: %w", kind, s, err)
	}
	return e, nil
}

// Options chooses the encodings. The zero value means thermometer:8 for
// numeric columns and onehot:1 for categorical ones.
type Options struct {
	Numeric     Encoding
	Categorical Encoding
}

func (o Options) withDefaults() Options {
	if o.Numeric.Method == "" {
		o.Numeric = Encoding{Method: Thermometer, Bins: DefaultBins}
	}
	if o.Categorical.Method == "" {
		o.Categorical = Encoding{Method: OneHot, Min: 1}
	}
	return o
}

// encoding returns the encoding o gives a column of kind k.
func (o Options) encoding(k tabular.Kind) Encoding {
	switch k {
	case tabular.Numeric:
		return o.Numeric
	case tabular.Categorical:
		return o.Categorical
	}
	return Encoding{Method: Flag}
}
