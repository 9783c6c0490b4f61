package export

import (
	"io"

	"deltafit/internal/reference"
)

// SelfcheckReport is what `deltafit selfcheck` reports: every reference
// case with its source, and how many failed.
type SelfcheckReport struct {
	Cases  []reference.Case `json:"cases"`
	Failed int              `json:"failed"`
}

// NewSelfcheckReport counts the failed cases.
func NewSelfcheckReport(cases []reference.Case) *SelfcheckReport {
	r := &SelfcheckReport{Cases: cases}
	for _, c := range cases {
		if !c.Pass {
			r.Failed++
		}
	}
	return r
}

// WriteSelfcheckReport writes r in the given format: in text and Markdown,
// one table of case, source, expected, got and pass ("yes" or "NO").
func WriteSelfcheckReport(w io.Writer, format Format, r *SelfcheckReport) error {
	if format == JSON {
		return WriteJSON(w, r)
	}
	p := &printer{w: w, markdown: format == Markdown}
	p.heading("deltafit selfcheck")
	rows := make([][]string, len(r.Cases))
	for i, c := range r.Cases {
		pass := "yes"
		if !c.Pass {
			pass = "NO"
		}
		rows[i] = []string{c.Name, c.Source, c.Expected, c.Got, pass}
	}
	p.table([]string{"case", "source", "expected", "got", "pass"}, rows, nil)
	return p.err
}
