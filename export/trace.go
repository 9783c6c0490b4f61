package export

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"deltafit/evaluate"
)

// TraceReport is what `deltafit trace` reports: the first weight updates
// of a fit, with the data they were made on.
type TraceReport struct {
	Data   string `json:"data"`
	SHA256 string `json:"sha256"`
	Rows   int    `json:"rows"`
	Seed   uint64 `json:"seed"`
	Tool   string `json:"tool"`
	*evaluate.Trace
}

// WriteTraceReport writes r as text (one table row per row presented),
// Markdown or JSON.
func WriteTraceReport(w io.Writer, format Format, r *TraceReport) error {
	if format == JSON {
		return WriteJSON(w, r)
	}
	p := &printer{w: w, markdown: format == Markdown}
	p.heading("deltafit trace")
	t := r.Trace
	p.line("trace: the first %s of the %s rule (%s units, rate %s) fitting all %s of %s, seed %d",
		count(len(t.Updates), "update"), t.Rule, t.Unit, num(t.Rate), count(r.Rows, "row"), r.Data, r.Seed)
	p.line("inputs: %s; the bias is the input %s, always 1; output units: %s", strings.Join(t.Inputs, ", "), evaluate.BiasName, strings.Join(t.Units, ", "))
	p.line("each row changes the weight from input x to unit j by Δw = rate · signal · x (delta rule: signal t − y); the outputs y are those before the change")
	if t.L2 > 0 {
		p.line("with weight decay %s each change is preceded by shrinking the weights (not the biases) by 1 − rate·%s, which the changes shown leave out", num(t.L2), num(t.L2))
	}
	if t.Averaged {
		p.line("these are the changes of the running weights; the model keeps their average over the later epochs")
	}
	if t.Deferred {
		p.line("this rule defers its changes: each is computed with the weights the epoch starts with, and their sum is applied at the end of the epoch")
	}
	rows := make([][]string, len(t.Updates))
	for k, u := range t.Updates {
		changes := make([]string, len(u.Changes))
		for i, c := range u.Changes {
			changes[i] = fmt.Sprintf("%s → %s: %s (x %s)", c.Input, c.Unit, signed(c.Delta), short(c.Activity))
		}
		rows[k] = []string{strconv.Itoa(u.Step), strconv.Itoa(u.Epoch), strconv.Itoa(u.Row), u.Class,
			unitValues(u.Targets, short), unitValues(u.Outputs, num), unitValues(u.Errors, signed), strings.Join(changes, "; "), num(u.LossSoFar)}
	}
	p.table([]string{"step", "epoch", "row", "class", "targets", "outputs", "t − y", "largest |Δw|: input → unit: Δw (x)", "loss so far"}, rows, nil)
	if t.Stop != "" {
		p.line("training ended before the updates asked for (stop: %s)", t.Stop)
	}
	return p.err
}

// unitValues writes one value per output unit, separated by spaces.
func unitValues(xs []float64, format func(float64) string) string {
	s := make([]string, len(xs))
	for i, x := range xs {
		s[i] = format(x)
	}
	return strings.Join(s, " ")
}

// signed writes x as num does, with a + before a positive number.
func signed(x float64) string {
	if x > 0 {
		return "+" + num(x)
	}
	return num(x)
}

// short writes x in at most four significant digits: targets and input
// activities, which are often whole.
func short(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }
