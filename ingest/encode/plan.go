package encode

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"deltafit/ingest/tabular"
)

// Numeric encodings.
const (
	Thermometer = "thermometer" // K quantile bins; unit k is on when x is above the k-th cut
	OneHotBins  = "onehot"      // K quantile bins; exactly one unit on
	Threshold   = "threshold"   // one unit, on when x is above a cut (default: training median)
	ZScore      = "zscore"      // (x − mean)/sd, continuous and not bounded to [0,1]
	MinMax      = "minmax"      // (x − min)/(max − min), clipped to [0,1]
)

// Categorical and boolean encodings.
const (
	OneHot = "onehot" // one unit per category seen at least MIN times, plus an "other" unit
	Flag   = "flag"   // boolean: one unit, on for true
)

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

// ParseNumericEncoding parses thermometer[:K], onehot[:K], threshold[:V],
// zscore or minmax.
func ParseNumericEncoding(s string) (Encoding, error) {
	method, arg, hasArg := strings.Cut(s, ":")
	e := Encoding{Method: method}
	switch method {
	case Thermometer, OneHotBins:
		e.Bins = DefaultBins
		if hasArg {
			k, err := strconv.Atoi(arg)
			if err != nil || k < 2 || k > MaxBins {
				return e, fmt.Errorf("ingest: numeric encoding %q: bins must be a whole number from 2 to %d", s, MaxBins)
			}
			e.Bins = k
		}
	case Threshold:
		if hasArg {
			v, err := strconv.ParseFloat(arg, 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return e, fmt.Errorf("ingest: numeric encoding %q: the threshold must be a finite number", s)
			}
			e.Cut = &v
		}
	case ZScore, MinMax:
		if hasArg {
			return e, fmt.Errorf("ingest: numeric encoding %q takes no argument", s)
		}
	default:
		return e, fmt.Errorf("ingest: unknown numeric encoding %q (want thermometer[:K], onehot[:K], threshold[:V], zscore or minmax)", s)
	}
	return e, nil
}

// ParseCategoricalEncoding parses onehot[:MIN].
func ParseCategoricalEncoding(s string) (Encoding, error) {
	method, arg, hasArg := strings.Cut(s, ":")
	if method != OneHot {
		return Encoding{}, fmt.Errorf("ingest: unknown categorical encoding %q (want onehot[:MIN])", s)
	}
	e := Encoding{Method: OneHot, Min: 1}
	if hasArg {
		k, err := strconv.Atoi(arg)
		if err != nil || k < 1 {
			return e, fmt.Errorf("ingest: categorical encoding %q: MIN must be a whole number of at least 1", s)
		}
		e.Min = k
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

// Plan is a fitted encoding: how each feature column becomes input units.
// It is stored in the model file, so new rows are encoded exactly as the
// training rows were.
type Plan struct {
	Features []Feature `json:"features"`
}

// Feature is the fitted encoding of one column.
type Feature struct {
	Column     string       `json:"column"`
	Kind       tabular.Kind `json:"kind"`
	Method     string       `json:"method"`
	Cuts       []float64    `json:"cuts,omitempty"`       // thermometer, onehot bins, threshold
	Center     float64      `json:"center,omitempty"`     // zscore mean, minmax minimum
	Scale      float64      `json:"scale,omitempty"`      // zscore sd, minmax range; 0 for a constant column
	Categories []string     `json:"categories,omitempty"` // categorical onehot, sorted; an "other" unit follows
	Missing    bool         `json:"missing_unit"`         // a missing-indicator unit follows the value units
}

// Width is the number of input units of the feature.
func (f *Feature) Width() int {
	return f.valueUnits() + boolInt(f.Missing)
}

func (f *Feature) valueUnits() int {
	switch f.Method {
	case Thermometer, Threshold:
		return len(f.Cuts)
	case OneHotBins:
		if f.Kind == tabular.Categorical {
			return len(f.Categories) + 1
		}
		return len(f.Cuts) + 1
	}
	return 1 // zscore, minmax, flag
}

// UnitNames names the feature's units, for reports and exported models.
func (f *Feature) UnitNames() []string {
	names := make([]string, 0, f.Width())
	switch {
	case f.Kind == tabular.Categorical:
		for _, c := range f.Categories {
			names = append(names, f.Column+"="+c)
		}
		names = append(names, f.Column+"=(other)")
	case f.Method == Thermometer || f.Method == Threshold:
		for _, c := range f.Cuts {
			names = append(names, f.Column+">"+formatCut(c))
		}
	case f.Method == OneHotBins:
		lower := "-inf"
		for _, c := range f.Cuts {
			names = append(names, fmt.Sprintf("%s in (%s,%s]", f.Column, lower, formatCut(c)))
			lower = formatCut(c)
		}
		names = append(names, fmt.Sprintf("%s in (%s,+inf)", f.Column, lower))
	default:
		names = append(names, f.Column+":"+f.Method)
	}
	if f.Missing {
		names = append(names, f.Column+":missing")
	}
	return names
}

func formatCut(c float64) string { return strconv.FormatFloat(c, 'g', 6, 64) }

// Width is the number of input units of the plan.
func (p *Plan) Width() int {
	w := 0
	for i := range p.Features {
		w += p.Features[i].Width()
	}
	return w
}

// UnitNames names every input unit, in pattern order.
func (p *Plan) UnitNames() []string {
	var names []string
	for i := range p.Features {
		names = append(names, p.Features[i].UnitNames()...)
	}
	return names
}

// FitPlan fits an encoding of the feature columns on the given rows only
// (0-based; nil means all rows). Cuts, means and category lists come from
// those rows alone.
func FitPlan(features []*tabular.Column, rows []int, opts Options) (*Plan, error) {
	opts = opts.withDefaults()
	p := &Plan{Features: make([]Feature, 0, len(features))}
	for _, col := range features {
		if rows == nil {
			rows = allRows(col.Len())
		}
		f, err := fitFeature(col, rows, opts)
		if err != nil {
			return nil, err
		}
		p.Features = append(p.Features, f)
	}
	return p, nil
}

func allRows(n int) []int {
	rows := make([]int, n)
	for i := range rows {
		rows[i] = i
	}
	return rows
}

func fitFeature(col *tabular.Column, rows []int, opts Options) (Feature, error) {
	f := Feature{Column: col.Name, Kind: col.Kind}
	for _, r := range rows {
		if col.IsMissing(r) {
			f.Missing = true
			break
		}
	}
	switch col.Kind {
	case tabular.Boolean:
		f.Method = Flag
	case tabular.Categorical:
		f.Method = OneHot
		counts := map[string]int{}
		for _, r := range rows {
			if !col.IsMissing(r) {
				counts[col.Text[r]]++
			}
		}
		for c, n := range counts {
			if n >= opts.Categorical.Min {
				f.Categories = append(f.Categories, c)
			}
		}
		if len(f.Categories) > MaxCategories {
			return f, &tabular.DataError{Name: col.Name, Err: fmt.Errorf("%d distinct values reach the least count %d, over the cap of %d per categorical column; is it an identifier to ignore, or should rare values share the other unit (a higher MIN)?",
				len(f.Categories), opts.Categorical.Min, MaxCategories)}
		}
		slices.Sort(f.Categories)
	default:
		f.Method = opts.Numeric.Method
		values := presentValues(col, rows)
		switch f.Method {
		case Thermometer, OneHotBins:
			f.Cuts = quantileCuts(values, opts.Numeric.Bins)
		case Threshold:
			cut := median(values)
			if opts.Numeric.Cut != nil {
				cut = *opts.Numeric.Cut
			}
			f.Cuts = []float64{cut}
		case ZScore:
			f.Center, f.Scale = meanSD(values)
		case MinMax:
			if len(values) > 0 {
				lo, hi := slices.Min(values), slices.Max(values)
				f.Center, f.Scale = lo, hi-lo
			}
		default:
			return f, fmt.Errorf("ingest: unknown numeric encoding %q", f.Method)
		}
		if math.IsInf(f.Center, 0) || math.IsInf(f.Scale, 0) || math.IsNaN(f.Scale) {
			return f, &tabular.DataError{Name: col.Name, Err: fmt.Errorf("the values span more than a 64-bit float holds, which the %s encoding cannot scale; rescale the column or use thermometer", f.Method)}
		}
	}
	return f, nil
}

func presentValues(col *tabular.Column, rows []int) []float64 {
	values := make([]float64, 0, len(rows))
	for _, r := range rows {
		if !col.IsMissing(r) {
			values = append(values, col.Numbers[r])
		}
	}
	return values
}

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

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// Bind finds the plan's columns in t by name and checks their kinds, so the
// plan can encode rows of a table other than the one it was fitted on.
func (p *Plan) Bind(t *tabular.Table) ([]*tabular.Column, error) {
	cols := make([]*tabular.Column, len(p.Features))
	for i := range p.Features {
		f := &p.Features[i]
		c := t.Column(f.Column)
		if c == nil {
			return nil, &tabular.DataError{File: t.Name, Name: f.Column, Err: errors.New("the model needs this column but the input does not have it")}
		}
		if c.Kind != f.Kind {
			return nil, &tabular.DataError{File: t.Name, Column: t.Index(f.Column) + 1, Name: f.Column,
				Err: fmt.Errorf("the column is %s here but %s in the model's training data", c.Kind, f.Kind)}
		}
		cols[i] = c
	}
	return cols, nil
}

// Kinds returns the column kinds the plan expects, for reading new data
// with the same kinds as the training data.
func (p *Plan) Kinds() map[string]tabular.Kind {
	kinds := make(map[string]tabular.Kind, len(p.Features))
	for _, f := range p.Features {
		kinds[f.Column] = f.Kind
	}
	return kinds
}

// Stats counts what encoding met that the plan was not fitted on.
type Stats struct {
	// Other counts, per column, values outside the plan's category list
	// (unseen, or too rare in training to get a unit), which go to the
	// "other" unit.
	Other map[string]Surprise
	// MissingNoUnit counts, per column, missing cells in a column whose
	// training rows had none (encoded with every unit of the column off).
	MissingNoUnit map[string]Surprise
}

// Surprise counts the cells of one column that met one condition.
type Surprise struct {
	Count    int
	FirstRow int // 1-based data row of the first such cell
}

func (s *Stats) add(m *map[string]Surprise, col string, row int) {
	merge(m, col, Surprise{Count: 1, FirstRow: row + 1})
}

func merge(m *map[string]Surprise, col string, s Surprise) {
	if *m == nil {
		*m = map[string]Surprise{}
	}
	old, seen := (*m)[col]
	if seen && old.FirstRow < s.FirstRow {
		s.FirstRow = old.FirstRow
	}
	s.Count += old.Count
	(*m)[col] = s
}

// Merge adds the counts of other, as when rows are encoded in blocks.
func (s *Stats) Merge(other Stats) {
	for col, n := range other.Other {
		merge(&s.Other, col, n)
	}
	for col, n := range other.MissingNoUnit {
		merge(&s.MissingNoUnit, col, n)
	}
}

// EncodeTo writes the patterns of the given rows (0-based; nil means all)
// into dst, row-major with Width values per row, and returns dst. cols are
// the plan's columns as returned by Bind, or the features it was fitted on.
// It panics if len(cols) differs from the number of features.
func (p *Plan) EncodeTo(dst []float64, cols []*tabular.Column, rows []int) ([]float64, Stats) {
	if len(cols) != len(p.Features) {
		panic("ingest: EncodeTo needs one column per feature")
	}
	if rows == nil && len(cols) > 0 {
		rows = allRows(cols[0].Len())
	}
	width := p.Width()
	dst = slices.Grow(dst[:0], len(rows)*width)[:len(rows)*width]
	clear(dst)
	var stats Stats
	for n, r := range rows {
		unit := dst[n*width : (n+1)*width]
		for i := range p.Features {
			f := &p.Features[i]
			w := f.Width()
			f.encode(unit[:w], cols[i], r, &stats)
			unit = unit[w:]
		}
	}
	return dst, stats
}

// encode writes one cell into its units, which arrive zeroed.
func (f *Feature) encode(units []float64, col *tabular.Column, row int, stats *Stats) {
	if col.IsMissing(row) {
		if f.Missing {
			units[len(units)-1] = 1
		} else {
			stats.add(&stats.MissingNoUnit, f.Column, row)
		}
		return
	}
	switch f.Method {
	case Flag:
		units[0] = col.Numbers[row]
	case OneHot:
		if f.Kind == tabular.Categorical {
			v := col.Text[row]
			i, found := slices.BinarySearch(f.Categories, v)
			if !found {
				i = len(f.Categories)
				stats.add(&stats.Other, f.Column, row)
			}
			units[i] = 1
			return
		}
		units[sort.SearchFloat64s(f.Cuts, col.Numbers[row])] = 1
	case Thermometer, Threshold:
		x := col.Numbers[row]
		for i, c := range f.Cuts {
			if x <= c {
				break
			}
			units[i] = 1
		}
	case ZScore:
		if f.Scale > 0 {
			units[0] = (col.Numbers[row] - f.Center) / f.Scale
		}
	case MinMax:
		if f.Scale > 0 {
			units[0] = min(1, max(0, (col.Numbers[row]-f.Center)/f.Scale))
		}
	}
}

// Caps on a plan read from a file, checked before it is used.
const (
	MaxFeatures = 100_000
	MaxWidth    = 1 << 20 // input units
)

// Validate checks a plan read from a file: known methods, sorted finite cuts,
// sorted distinct categories and sizes within the caps.
func (p *Plan) Validate() error {
	if len(p.Features) > MaxFeatures {
		return fmt.Errorf("ingest: the plan has %d features, over the cap of %d", len(p.Features), MaxFeatures)
	}
	width := 0
	seen := make(map[string]bool, len(p.Features))
	for i := range p.Features {
		f := &p.Features[i]
		if f.Column == "" || seen[f.Column] {
			return fmt.Errorf("ingest: plan feature %d has an empty or repeated column name %q", i+1, f.Column)
		}
		seen[f.Column] = true
		if err := f.validate(); err != nil {
			return fmt.Errorf("ingest: plan feature %q: %v", f.Column, err)
		}
		width += f.Width()
		if width > MaxWidth {
			return fmt.Errorf("ingest: the plan has more than %d input units", MaxWidth)
		}
	}
	return nil
}

func (f *Feature) validate() error {
	for _, x := range []float64{f.Center, f.Scale} {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return errors.New("center and scale must be finite")
		}
	}
	if len(f.Cuts) > MaxBins {
		return fmt.Errorf("%d cuts, over the cap of %d", len(f.Cuts), MaxBins)
	}
	for i, c := range f.Cuts {
		if math.IsNaN(c) || math.IsInf(c, 0) || (i > 0 && c <= f.Cuts[i-1]) {
			return errors.New("cuts must be finite and increasing")
		}
	}
	if len(f.Categories) > MaxCategories {
		return fmt.Errorf("%d categories, over the cap of %d", len(f.Categories), MaxCategories)
	}
	for i := 1; i < len(f.Categories); i++ {
		if f.Categories[i] <= f.Categories[i-1] {
			return errors.New("categories must be sorted and distinct")
		}
	}
	switch {
	case f.Kind == tabular.Categorical && f.Method == OneHot:
	case f.Kind == tabular.Boolean && f.Method == Flag:
	case f.Kind == tabular.Numeric && (f.Method == Thermometer || f.Method == OneHotBins):
	case f.Kind == tabular.Numeric && f.Method == Threshold && len(f.Cuts) == 1:
	case f.Kind == tabular.Numeric && (f.Method == ZScore || f.Method == MinMax) && f.Scale >= 0:
	default:
		return fmt.Errorf("method %q does not fit a %s column with these parameters", f.Method, f.Kind)
	}
	if f.Kind != tabular.Categorical && len(f.Categories) > 0 {
		return errors.New("only categorical features have categories")
	}
	return nil
}
