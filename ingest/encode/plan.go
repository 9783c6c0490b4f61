package encode

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"deltafit/ingest/tabular"
)

// Plan is a fitted encoding: how each feature column becomes input units.
// It is stored in the model file, so new rows are encoded exactly as the
// training rows were.
type Plan struct {
	Features []Feature `json:"features"`
	// QuantileRankError is, for a plan fitted from summaries that sketch
	// their numeric values (a plan fitted in a streaming pass over data
	// larger than memory), the largest bound on the rank error of any
	// column's quantile cuts, as a fraction of the column's present values
	// (see Sketch): each cut lies between the order statistics whose ranks
	// are within that fraction of its exact rank. 0, and not written, when
	// every cut is exact.
	QuantileRankError float64 `json:"quantile_rank_error,omitempty"`
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

// method returns the feature's encoding method. It panics if the feature
// names none of its kind, which FitPlan never makes and Validate refuses.
func (f *Feature) method() method {
	m, ok := lookup(f.Kind, f.Method)
	if !ok {
		panic(fmt.Sprintf("encode: feature %q has no %s method %q; validate plans read from files", f.Column, f.Kind, f.Method))
	}
	return m
}

// Width is the number of input units of the feature.
func (f *Feature) Width() int {
	w := f.method().valueUnits(f)
	if f.Missing {
		w++
	}
	return w
}

// UnitNames names the feature's units, for reports and exported models.
func (f *Feature) UnitNames() []string {
	names := f.method().unitNames(f)
	if f.Missing {
		names = append(names, f.Column+":missing")
	}
	return names
}

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
// those rows alone. A column that cannot be encoded is a *tabular.DataError
// naming it.
func FitPlan(features []*tabular.Column, rows []int, opts Options) (*Plan, error) {
	summaries := make([]*Summary, len(features))
	for i, col := range features {
		summaries[i] = Summarize(col, rows)
	}
	return PlanFromSummaries(summaries, opts)
}

// PlanFromSummaries fits an encoding of the columns that summaries
// describe, as FitPlan does from their rows.
func PlanFromSummaries(summaries []*Summary, opts Options) (*Plan, error) {
	opts = opts.withDefaults()
	p := &Plan{Features: make([]Feature, 0, len(summaries))}
	for _, s := range summaries {
		e := opts.encoding(s.Kind)
		m, ok := lookup(s.Kind, e.Method)
		if !ok && e.Method == Auto {
			return nil, errors.New("ingest: the auto encoding is chosen by a learner on its training rows; give the plan the encoding it chose")
		}
		if !ok {
			return nil, fmt.Errorf("ingest: unknown %s encoding %q", s.Kind, e.Method)
		}
		f := Feature{Column: s.Column, Kind: s.Kind, Method: e.Method, Missing: s.Missing > 0}
		if err := m.fit(&f, s, e); err != nil {
			return nil, &tabular.DataError{Name: s.Column, Err: err}
		}
		if quantileCut(e) {
			p.QuantileRankError = max(p.QuantileRankError, s.RankError())
		}
		p.Features = append(p.Features, f)
	}
	return p, nil
}

// quantileCut reports whether the numeric encoding e places cuts at
// quantiles of the training values.
func quantileCut(e Encoding) bool {
	switch e.Method {
	case Thermometer, OneHot, Hybrid:
		return true
	case Threshold:
		return e.Cut == nil
	}
	return false
}

func allRows(n int) []int {
	rows := make([]int, n)
	for i := range rows {
		rows[i] = i
	}
	return rows
}

// Bind finds the plan's columns in t by name and checks their kinds, so the
// plan can encode rows of a table other than the one it was fitted on.
func (p *Plan) Bind(t *tabular.Table) ([]*tabular.Column, error) {
	index := make(map[string]int, len(t.Columns))
	for i := len(t.Columns) - 1; i >= 0; i-- { // the first of repeated names wins, as Table.Column
		index[t.Columns[i].Name] = i
	}
	cols := make([]*tabular.Column, len(p.Features))
	for i := range p.Features {
		f := &p.Features[i]
		k, ok := index[f.Column]
		if !ok {
			return nil, &tabular.DataError{File: t.Name, Name: f.Column, Err: errors.New("the model needs this column but the input does not have it")}
		}
		c := t.Columns[k]
		if c.Kind != f.Kind {
			return nil, &tabular.DataError{File: t.Name, Column: t.Position(f.Column), Name: f.Column,
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

// EncodeTo writes the patterns of the given rows (0-based; nil means all)
// into dst, row-major with Width values per row, and returns dst. cols are
// the plan's columns as returned by Bind, or the features it was fitted on.
// It panics if len(cols) differs from the number of features.
func (p *Plan) EncodeTo(dst []float64, cols []*tabular.Column, rows []int) ([]float64, Stats) {
	if len(cols) != len(p.Features) {
		panic("encode: EncodeTo needs one column per feature")
	}
	if rows == nil && len(cols) > 0 {
		rows = allRows(cols[0].Len())
	}
	width := p.Width()
	dst = slices.Grow(dst[:0], len(rows)*width)[:len(rows)*width]
	clear(dst)
	var stats Stats
	methods := make([]method, len(p.Features))
	widths := make([]int, len(p.Features))
	for i := range p.Features {
		methods[i], widths[i] = p.Features[i].method(), p.Features[i].Width()
	}
	for n, r := range rows {
		units := dst[n*width : (n+1)*width]
		for i := range p.Features {
			f, w := &p.Features[i], widths[i]
			switch {
			case !cols[i].IsMissing(r):
				methods[i].encode(f, units[:w], cols[i], r, &stats)
			case f.Missing:
				units[w-1] = 1
			default:
				stats.add(&stats.MissingNoUnit, f.Column, r)
			}
			units = units[w:]
		}
	}
	return dst, stats
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
			return fmt.Errorf("ingest: plan feature %q: %w", f.Column, err)
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
	m, ok := lookup(f.Kind, f.Method)
	if !ok {
		return fmt.Errorf("method %q does not fit a %s column", f.Method, f.Kind)
	}
	if f.Kind != tabular.Categorical && len(f.Categories) > 0 {
		return errors.New("only categorical features have categories")
	}
	if f.Kind == tabular.Categorical && len(f.Cuts) > 0 {
		return errors.New("categorical features have no cuts")
	}
	return m.validate(f)
}

// Binary reports whether every unit of the plan is 0 or 1 on every row:
// no feature is encoded by zscore, minmax or hybrid, whose units take
// other values. Patterns of a binary plan can be stored packed, one bit a
// unit.
func (p *Plan) Binary() bool {
	for _, f := range p.Features {
		switch f.Method {
		case ZScore, MinMax, Hybrid:
			return false
		}
	}
	return true
}
