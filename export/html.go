package export

import (
	_ "embed"
	"fmt"
	"html/template"
	"image/color"
	"io"
	"strconv"
	"strings"

	"deltafit/evaluate"
	"deltafit/evaluate/separate"
)

// HTMLReport is what the one-page HTML report shows. Fit or Evaluation
// must be set; Check and Figures may be absent.
type HTMLReport struct {
	Fit        *FitReport
	Evaluation *EvaluationReport
	Check      *separate.Report // the separability of the classes, with the proofs
	Figures    []*Figure
}

//go:embed report.html.tmpl
var htmlTemplateText string

var htmlTemplate = template.Must(template.New("report").Parse(htmlTemplateText))

// WriteHTMLReport writes r as one self-contained HTML page: inline CSS,
// inline SVG plots, no script and nothing fetched from a network. It reads
// at phone width and prints.
func WriteHTMLReport(w io.Writer, r *HTMLReport) error {
	page, err := newHTMLPage(r)
	if err != nil {
		return err
	}
	if err := htmlTemplate.Execute(w, page); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	return nil
}

// htmlPage is the report laid out for the template: every figure already
// formatted, every section in order.
type htmlPage struct {
	Title    string
	Tool     string
	Sections []htmlSection
}

// htmlSection is one titled part of the page.
type htmlSection struct {
	ID, Title string
	Lines     []string // paragraphs before the tables
	Tables    []htmlTable
	Figures   []htmlFigure
	Notes     []string // paragraphs after the tables
}

type htmlTable struct {
	Caption string
	Header  []string
	// HeaderCells are the header aligned as its column: right over a
	// column of numbers (alignHeaders fills them in).
	HeaderCells []htmlCell
	Rows        [][]htmlCell
	Footer      []htmlCell
	// Scroll lets a long table scroll on screen (printed whole).
	Scroll bool
}

type htmlCell struct {
	Text  string
	Num   bool         // right-aligned, tabular figures
	Style template.CSS // colours of a confusion cell
}

type htmlFigure struct {
	Title string
	SVG   template.HTML
}

func textCells(texts ...string) []htmlCell {
	cells := make([]htmlCell, len(texts))
	for i, t := range texts {
		_, err := strconv.ParseFloat(t, 64)
		cells[i] = htmlCell{Text: t, Num: i > 0 && err == nil}
	}
	return cells
}

func newHTMLPage(r *HTMLReport) (*htmlPage, error) {
	page := &htmlPage{Tool: Tool()}
	switch {
	case r.Fit != nil:
		page.Title = "deltafit report: " + r.Fit.Data.Source
		page.fit(r.Fit)
	case r.Evaluation != nil:
		page.Title = "deltafit evaluation: " + r.Evaluation.Data.Source
		page.evaluation(r.Evaluation)
	default:
		return nil, fmt.Errorf("export: an HTML report needs a fit or an evaluation")
	}
	if len(r.Figures) > 0 {
		s := htmlSection{ID: "plots", Title: "Plots"}
		for _, f := range r.Figures {
			svg, err := f.InlineSVG()
			if err != nil {
				return nil, err
			}
			s.Figures = append(s.Figures, htmlFigure{Title: f.Title, SVG: template.HTML(svg)})
		}
		page.insertBefore("history", s)
	}
	if r.Check != nil {
		page.Sections = append(page.Sections, checkSection(r.Check))
	}
	for i := range page.Sections {
		for k := range page.Sections[i].Tables {
			page.Sections[i].Tables[k].alignHeaders()
		}
	}
	return page, nil
}

// alignHeaders sets HeaderCells: a column all of whose cells are numbers
// has its header right-aligned too.
func (t *htmlTable) alignHeaders() {
	t.HeaderCells = make([]htmlCell, len(t.Header))
	for j, h := range t.Header {
		numeric := len(t.Rows) > 0
		for _, row := range t.Rows {
			if j >= len(row) || !row[j].Num {
				numeric = false
				break
			}
		}
		t.HeaderCells[j] = htmlCell{Text: h, Num: numeric}
	}
}

// insertBefore places s before the section of the given id, or last.
func (p *htmlPage) insertBefore(id string, s htmlSection) {
	for i, other := range p.Sections {
		if other.ID == id {
			p.Sections = append(p.Sections[:i], append([]htmlSection{s}, p.Sections[i:]...)...)
			return
		}
	}
	p.Sections = append(p.Sections, s)
}

func (p *htmlPage) fit(r *FitReport) {
	d, t := r.Data, r.Training
	summary := htmlSection{ID: "summary", Title: "Summary"}
	summary.Lines = append(summary.Lines,
		fmt.Sprintf("Data: %s, %s, %s encoded as %s; target %s with %d classes (%s).",
			d.Source, count(d.Rows, "row"), count(d.Features, "feature column"), count(d.Inputs, "input unit"), d.Target, len(d.Labels), countList(d.Labels, d.ClassCounts)),
		fmt.Sprintf("Fit on all rows: %s rule, %s units, rate %s (%s); %s (stop: %s), %s (accuracy on the rows trained on %s), loss %s.",
			t.Rule, t.Unit, num(t.Rate), rateNote(t), count(t.Epochs, "epoch"), t.Stop, count(t.Errors, "training error"), num(t.Accuracy), num(t.Loss)))
	if r.CV != nil {
		cv := r.CV
		summary.Lines = append(summary.Lines, fmt.Sprintf(
			"Cross-validated (%d stratified folds%s, seed %d): pooled out-of-fold accuracy %s (95%% Wilson interval %s–%s), against %s for the Hebbian rule and %s for the majority class; Matthews correlation %s.",
			cv.Folds, repeatsNote(cv.Repeats), cv.Seed, num(cv.Accuracy.Pooled), num(cv.AccuracyInterval.Low), num(cv.AccuracyInterval.High),
			num(cv.Baselines.Hebbian.Pooled), num(cv.Baselines.Majority.Pooled), num(cv.MCC)))
	} else {
		summary.Lines = append(summary.Lines, "No cross-validation: the figures of the fit are on the rows it was trained on, which flatters them.")
	}
	if r.Model != "" {
		summary.Lines = append(summary.Lines, "Model file: "+r.Model+".")
	}
	p.Sections = append(p.Sections, summary)
	if r.Settings != nil {
		p.Sections = append(p.Sections, settingsSection(*r.Settings))
	}
	if cv := r.CV; cv != nil {
		method := cv.Method
		if method == "hebbian" {
			method = "hebbian (fitted)"
		}
		s := htmlSection{ID: "cross-validation", Title: "Cross-validation"}
		s.Lines = append(s.Lines, fmt.Sprintf("%d stratified folds%s, seed %d; the encoding and the weights are fitted on each training fold only. Accuracy is pooled: right out-of-fold predictions over all of them; the fold mean and sd are over the %d folds.",
			cv.Folds, repeatsNote(cv.Repeats), cv.Seed, cv.Folds*cv.Repeats))
		s.Tables = append(s.Tables, htmlTable{
			Header: []string{"method", "accuracy", "fold mean", "fold sd", "balanced accuracy", "macro F1", "kappa", "MCC"},
			Rows: [][]htmlCell{
				textCells(methodRow(method, MethodSummary{Pooled: cv.Accuracy.Pooled, Accuracy: cv.Accuracy.Mean, SD: cv.Accuracy.SD, TableMetrics: cv.TableMetrics})...),
				textCells(methodRow("hebbian", cv.Baselines.Hebbian)...),
				textCells(methodRow("majority", cv.Baselines.Majority)...),
			},
		})
		p.Sections = append(p.Sections, s)
		p.confusionSections(cv.ConfusionDetail, cv.MCC, cv.Scores, "pooled out-of-fold predictions of the "+cv.Method+" rule")
	}
	p.Sections = append(p.Sections, historySection(Curve(r.History)), encodingSection(r.Plan))
}

func repeatsNote(repeats int) string {
	if repeats > 1 {
		return fmt.Sprintf(" repeated %d times", repeats)
	}
	return ""
}

func (p *htmlPage) evaluation(r *EvaluationReport) {
	d := r.Data
	summary := htmlSection{ID: "summary", Title: "Summary"}
	summary.Lines = append(summary.Lines,
		fmt.Sprintf("Model %s on %s: %s, target %s with %d classes (%s).", r.Model, d.Source, count(d.Rows, "row"), d.Target, len(d.Labels), countList(d.Labels, d.ClassCounts)),
		fmt.Sprintf("Accuracy %s (95%% Wilson interval %s–%s), balanced accuracy %s, macro F1 %s, Cohen's kappa %s, Matthews correlation %s.",
			num(r.Accuracy), num(r.AccuracyInterval.Low), num(r.AccuracyInterval.High), num(r.BalancedAccuracy), num(r.MacroF1), num(r.Kappa), num(r.MCC)))
	p.Sections = append(p.Sections, summary)
	if r.Settings != nil {
		p.Sections = append(p.Sections, settingsSection(*r.Settings))
	}
	p.confusionSections(r.ConfusionDetail, r.MCC, r.Scores, "the model's predictions of the rows evaluated")
}

func settingsSection(s Settings) htmlSection {
	rows := settingRows(s)
	t := htmlTable{Header: []string{"setting", "value"}}
	for _, r := range rows {
		t.Rows = append(t.Rows, []htmlCell{{Text: r[0]}, {Text: r[1]}})
	}
	return htmlSection{ID: "settings", Title: "Settings", Tables: []htmlTable{t},
		Lines: []string{"Everything the figures depend on, so that two reports can be compared."}}
}

// confusionSections adds the confusion table and the per-class figures.
func (p *htmlPage) confusionSections(d ConfusionDetail, mcc float64, scores *ScoreFigures, what string) {
	c := d.Confusion
	s := htmlSection{ID: "confusion", Title: "Confusion table"}
	s.Lines = append(s.Lines, "Rows are the true classes, columns the predicted ones, of the "+what+". A cell's shade is the share of its true class's rows it holds.")
	t := htmlTable{Header: append(append([]string{"true \\ predicted"}, c.Labels...), "total")}
	support := c.RowTotals()
	for i, row := range c.Matrix {
		cells := []htmlCell{{Text: c.Labels[i]}}
		for _, n := range row {
			share := 0.0
			if support[i] > 0 {
				share = float64(n) / float64(support[i])
			}
			cells = append(cells, htmlCell{Text: strconv.Itoa(n), Num: true, Style: shade(share)})
		}
		t.Rows = append(t.Rows, append(cells, htmlCell{Text: strconv.Itoa(support[i]), Num: true}))
	}
	t.Footer = []htmlCell{{Text: "total"}}
	for _, n := range c.ColTotals() {
		t.Footer = append(t.Footer, htmlCell{Text: strconv.Itoa(n), Num: true})
	}
	t.Footer = append(t.Footer, htmlCell{Text: strconv.Itoa(c.Total()), Num: true})
	s.Tables = append(s.Tables, t)
	p.Sections = append(p.Sections, s)

	k := htmlSection{ID: "classes", Title: "By class"}
	classes := htmlTable{Header: []string{"class", "true rows", "predicted rows", "recall", "precision", "F1"}}
	for _, m := range d.Classes {
		classes.Rows = append(classes.Rows, textCells(m.Label, strconv.Itoa(m.Support), strconv.Itoa(m.Predicted), num(m.Recall), num(m.Precision), num(m.F1)))
	}
	averages := htmlTable{Caption: "averaged over the classes", Header: []string{"average", "recall", "precision", "F1", "how"}}
	for _, a := range []struct {
		name, how string
		v         evaluate.Averaged
	}{
		{"micro", "counts pooled over the classes", d.Averages.Micro},
		{"macro", "plain mean over the classes", d.Averages.Macro},
		{"weighted", "mean weighted by true rows", d.Averages.Weighted},
	} {
		averages.Rows = append(averages.Rows, textCells(a.name, num(a.v.Recall), num(a.v.Precision), num(a.v.F1), a.how))
	}
	k.Tables = append(k.Tables, classes, averages)
	k.Notes = append(k.Notes, fmt.Sprintf("Accuracy %s, 95%% Wilson interval [%s, %s] over %s; Matthews correlation %s.",
		num(c.Accuracy()), num(d.AccuracyInterval.Low), num(d.AccuracyInterval.High), count(c.Total(), "prediction"), num(mcc)))
	if scores != nil {
		var parts []string
		if scores.AUC != nil {
			parts = append(parts, fmt.Sprintf("ROC AUC %s (positive class %s)", num(*scores.AUC), scores.Positive))
		}
		if scores.LogLoss != nil {
			parts = append(parts, "log loss "+num(*scores.LogLoss))
		}
		if scores.Brier != nil {
			parts = append(parts, "Brier score "+num(*scores.Brier))
		}
		if len(parts) > 0 {
			k.Notes = append(k.Notes, "From the scores: "+strings.Join(parts, ", ")+".")
		}
		k.Notes = append(k.Notes, scores.Notes...)
	}
	p.Sections = append(p.Sections, k)
}

// shade is the background of a confusion cell holding share of its row,
// on the plots' sequential scale, with a text colour that reads on it.
func shade(share float64) template.CSS {
	c, _ := sequentialScale(0, 1).At(share)
	bg := color.NRGBAModel.Convert(c).(color.NRGBA)
	fg := "#141414"
	if share > 0.55 {
		fg = "#ffffff"
	}
	return template.CSS(fmt.Sprintf("background:#%02x%02x%02x;color:%s", bg.R, bg.G, bg.B, fg))
}

func historySection(points []CurvePoint) htmlSection {
	s := htmlSection{ID: "history", Title: "Learning curve"}
	s.Lines = append(s.Lines, "Every epoch of the fit on all rows: the loss is the mean of (t − y)² over the rows and units, the errors the rows misclassified.")
	heldOut := hasHeldOut(points)
	t := htmlTable{Header: []string{"epoch", "training loss", "training errors"}, Scroll: len(points) > 25}
	if heldOut {
		t.Header = append(t.Header, "held-out loss", "held-out errors")
	}
	for _, c := range points {
		row := []string{strconv.Itoa(c.Epoch), num(c.Loss), strconv.Itoa(c.Errors)}
		if heldOut {
			row = append(row, num(c.HeldOutLoss), strconv.Itoa(c.HeldOutErrors))
		}
		t.Rows = append(t.Rows, textCells(row...))
	}
	s.Tables = append(s.Tables, t)
	return s
}

func encodingSection(plan PlanSummary) htmlSection {
	s := htmlSection{ID: "encoding", Title: "Encoding"}
	if c := plan.Choice; c != nil {
		var scores []string
		for _, k := range c.Candidates {
			scores = append(scores, k.Encoding+" "+num(k.Accuracy))
		}
		line := fmt.Sprintf("The auto encoding chose %s for the numeric columns (%s).", c.Chosen, c.Basis)
		if len(scores) > 0 {
			line = fmt.Sprintf("The auto encoding chose %s for the numeric columns (%s; accuracy on %s: %s).", c.Chosen, c.Basis, count(c.CheckRows, "held-out row"), strings.Join(scores, ", "))
		}
		s.Lines = append(s.Lines, line)
	}
	t := htmlTable{Header: []string{"column", "kind", "encoding", "units", "missing unit"}}
	for _, c := range plan.Columns {
		missing := "no"
		if c.Missing {
			missing = "yes"
		}
		t.Rows = append(t.Rows, textCells(c.Column, c.Kind, c.Encoding, strconv.Itoa(c.Units), missing))
	}
	s.Tables = append(s.Tables, t)
	return s
}

// proofsShown is the most certificates the HTML report details; the
// verdict table lists every split.
const proofsShown = 12

func checkSection(r *separate.Report) htmlSection {
	s := htmlSection{ID: "separability", Title: "Linear separability"}
	s.Lines = append(s.Lines, fmt.Sprintf("Can one layer split each class from the rest without error? Checked in the %s (%s); every answer is verified row by row on the data. Not separable: a certificate, rows of each side whose weighted means coincide, so their convex hulls meet. Separable: a witness hyperplane with its margin.",
		spaceNote(r.Space), count(len(r.Inputs), "coordinate")))
	verdicts := htmlTable{Header: []string{"positive", "negative", "rows", "verdict", "evidence"}}
	for _, sp := range r.Splits {
		evidence := sp.Reason
		switch {
		case sp.Certificate != nil:
			evidence = fmt.Sprintf("certificate of %d rows, residual %s", len(sp.Certificate.Rows), num(sp.Certificate.Residual))
		case sp.Witness != nil:
			evidence = fmt.Sprintf("witness hyperplane, margin %s, %d rows checked", num(sp.Witness.Margin), sp.Witness.Rows)
		}
		verdicts.Rows = append(verdicts.Rows, textCells(sp.Positive, sp.Negative, strconv.Itoa(sp.Rows), string(sp.Verdict), evidence))
	}
	s.Tables = append(s.Tables, verdicts)
	shown := 0
	for _, sp := range r.Splits {
		if sp.Certificate == nil || shown == proofsShown {
			continue
		}
		shown++
		c := sp.Certificate
		t := htmlTable{Caption: "certificate: " + splitName(sp) + fmt.Sprintf(" (residual ‖Σλx − Σμx‖∞ = %s)", num(c.Residual)), Header: []string{"row", "side", "weight"}}
		for i, row := range c.Rows {
			side := sp.Negative
			if c.Positive[i] {
				side = sp.Positive
			}
			t.Rows = append(t.Rows, []htmlCell{{Text: strconv.Itoa(row), Num: true}, {Text: side}, {Text: strconv.FormatFloat(c.Weights[i], 'g', 6, 64), Num: true}})
		}
		s.Tables = append(s.Tables, t)
	}
	for _, sp := range r.Splits {
		if sp.Witness != nil {
			s.Notes = append(s.Notes, fmt.Sprintf("Witness for %s: bias %s, margin %s, %d rows checked (weights in check --format json).",
				splitName(sp), num(sp.Witness.Bias), num(sp.Witness.Margin), sp.Witness.Rows))
		}
	}
	c := r.Conflicts
	if c.Count == 0 {
		s.Notes = append(s.Notes, "Conflicting rows (identical inputs, different classes): none, so the error floor of any classifier on these inputs is 0.")
	} else {
		s.Notes = append(s.Notes, fmt.Sprintf("Conflicting rows (identical inputs, different classes): %s, %s; any classifier makes at least %s, an error floor of %s.",
			count(c.Count, "group"), count(c.Rows, "row"), count(c.MinErrors, "error"), num(c.ErrorFloor)))
	}
	return s
}
