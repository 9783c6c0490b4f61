package export

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"deltafit/evaluate"
	"deltafit/ingest/encode"
)

// PlanReport is what `deltafit encode --plan-only` prints: how each
// feature column becomes input units.
type PlanReport struct {
	Source string `json:"source"` // the model file, or the data the plan was fitted on
	Inputs int    `json:"inputs"` // input units in all
	// Choice says how the auto numeric encoding was chosen; absent when
	// the encoding was given or the plan is a model's.
	Choice  *evaluate.EncodingChoice `json:"auto,omitempty"`
	Columns []PlanColumn             `json:"columns"`
}

// PlanColumn is the encoding of one feature column, with what it was
// fitted to: the cuts of a binned or threshold encoding, the center and
// scale of zscore, minmax and hybrid, the categories that have a unit of
// their own.
type PlanColumn struct {
	Column      string    `json:"column"`
	Kind        string    `json:"kind"`
	Encoding    string    `json:"encoding"`
	Cuts        []float64 `json:"cuts,omitempty"`
	Center      *float64  `json:"center,omitempty"`
	Scale       *float64  `json:"scale,omitempty"`
	Categories  []string  `json:"categories,omitempty"`
	MissingUnit bool      `json:"missing_unit"`
	Units       []string  `json:"units"` // unit names, in pattern order
}

// NewPlanReport describes plan, fitted on source (or read from it).
func NewPlanReport(source string, plan *encode.Plan, choice *evaluate.EncodingChoice) *PlanReport {
	r := &PlanReport{Source: source, Inputs: plan.Width(), Choice: choice, Columns: make([]PlanColumn, len(plan.Features))}
	for i := range plan.Features {
		f := &plan.Features[i]
		c := PlanColumn{Column: f.Column, Kind: f.Kind.String(), Encoding: f.Method, Cuts: f.Cuts,
			Categories: f.Categories, MissingUnit: f.Missing, Units: f.UnitNames()}
		switch f.Method {
		case encode.ZScore, encode.MinMax, encode.Hybrid:
			center, scale := f.Center, f.Scale
			c.Center, c.Scale = &center, &scale
		}
		r.Columns[i] = c
	}
	return r
}

// WritePlanReport writes r in the given format: text or Markdown, a table
// of one row per column; JSON, every field.
func WritePlanReport(w io.Writer, format Format, r *PlanReport) error {
	if format == JSON {
		return WriteJSON(w, r)
	}
	p := &printer{w: w, markdown: format == Markdown}
	p.heading("deltafit encode --plan-only")
	p.line("plan: %s, %s, %s", r.Source, count(len(r.Columns), "feature column"), count(r.Inputs, "input unit"))
	if r.Choice != nil {
		p.plan(PlanSummary{Choice: r.Choice})
	}
	rows := make([][]string, len(r.Columns))
	for i, c := range r.Columns {
		rows[i] = []string{c.Column, c.Kind, c.Encoding, c.fitted(), strings.Join(c.Units, "; ")}
	}
	p.blank()
	p.table([]string{"column", "kind", "encoding", "fitted", "units"}, rows, nil)
	return p.err
}

// fitted says what the column's encoding was fitted to, in a few words.
func (c PlanColumn) fitted() string {
	var parts []string
	if c.Center != nil {
		parts = append(parts, "center "+strconv.FormatFloat(*c.Center, 'g', 6, 64), "scale "+strconv.FormatFloat(*c.Scale, 'g', 6, 64))
	}
	if len(c.Cuts) > 0 {
		cuts := make([]string, len(c.Cuts))
		for i, x := range c.Cuts {
			cuts[i] = strconv.FormatFloat(x, 'g', 6, 64)
		}
		parts = append(parts, "cuts "+strings.Join(cuts, " "))
	}
	if len(c.Categories) > 0 {
		quoted := make([]string, len(c.Categories))
		for i, v := range c.Categories {
			quoted[i] = strconv.Quote(v)
		}
		parts = append(parts, fmt.Sprintf("categories %s", strings.Join(quoted, " ")))
	}
	if c.MissingUnit {
		parts = append(parts, "missing unit")
	}
	return strings.Join(parts, ", ")
}
