package export

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"

	"github.com/olekukonko/tablewriter"
	"github.com/olekukonko/tablewriter/renderer"
	"github.com/olekukonko/tablewriter/tw"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// Format is a report format.
type Format string

const (
	Text     Format = "text"
	JSON     Format = "json"
	Markdown Format = "markdown"
	// HTML is the one-page report of export.WriteHTMLReport; the
	// text-like writers do not take it.
	HTML Format = "html"
)

// ParseFormat parses "text", "json" or "markdown".
func ParseFormat(s string) (Format, error) {
	switch f := Format(s); f {
	case Text, JSON, Markdown:
		return f, nil
	}
	return "", fmt.Errorf("export: unknown report format %q (want text, json or markdown)", s)
}

// DataSummary describes the data a report is about.
type DataSummary struct {
	Source   string `json:"source"`
	SHA256   string `json:"sha256"`
	Rows     int    `json:"rows"`
	Features int    `json:"features"` // feature columns
	Inputs   int    `json:"inputs"`   // encoded input units (coordinates, in check's raw space)
	// Raw marks check's raw space, where the features are not encoded.
	Raw         bool     `json:"raw,omitempty"`
	Target      string   `json:"target"`
	Labels      []string `json:"labels"`
	ClassCounts []int    `json:"class_counts"`
}

// TrainingSummary describes the fit on all rows.
type TrainingSummary struct {
	Rule        string  `json:"rule"`
	Unit        string  `json:"unit"`
	Rate        float64 `json:"rate"`
	RateAuto    bool    `json:"rate_auto"`
	LambdaMax   float64 `json:"lambda_max"`
	StableBelow float64 `json:"stable_below"` // 2/λmax
	// RateBound is the stability bound that applies to the run, named by
	// RateBoundName: "every-row" (online, 2/(max‖x̃‖² + l2)), "mean"
	// (batch, 2/(λmax + l2)) or "none" (one pass). Empty for a model file
	// that predates it.
	RateBound        float64 `json:"rate_bound"`
	RateBoundName    string  `json:"rate_bound_name"`
	RateBoundFormula string  `json:"rate_bound_formula"` // such as "2/max‖x̃‖²"
	Epochs           int     `json:"epochs"`
	// Errors, Accuracy and Loss are those of the weights kept on the
	// rows trained on (all rows but the held-out ones).
	Errors      int     `json:"errors"`
	Accuracy    float64 `json:"accuracy"`
	Loss        float64 `json:"loss"`
	Stop        string  `json:"stop"`
	StopRule    string  `json:"stop_rule"` // the rule that stopped the run, in words
	KeptEpoch   int     `json:"kept_epoch"`
	AverageFrom int     `json:"average_from"` // 0: the weights are not averaged
	HoldoutRows int     `json:"holdout_rows"`
}

// NewTrainingSummary summarises a model's training record.
func NewTrainingSummary(m *Model) TrainingSummary {
	return trainingSummary(m.Network, m.Training, m.Data.Rows)
}

func trainingSummary(net *fit.Network, t Training, rows int) TrainingSummary {
	s := TrainingSummary{
		Rule: net.Rule, Unit: net.Unit.String(),
		Rate: t.Rate, RateAuto: t.RateAuto, LambdaMax: t.LambdaMax,
		RateBound: t.RateBound, RateBoundName: t.RateBoundName, RateBoundFormula: t.RateBoundFormula,
		Epochs: t.Epochs, Errors: t.Errors, Loss: t.Loss, Stop: t.Stop, StopRule: t.StopRule,
		KeptEpoch: t.KeptEpoch, AverageFrom: t.AverageFrom, HoldoutRows: t.HoldoutRows,
	}
	if t.LambdaMax > 0 {
		s.StableBelow = 2 / t.LambdaMax
	}
	if trained := rows - t.HoldoutRows; trained > 0 {
		s.Accuracy = 1 - float64(t.Errors)/float64(trained)
	}
	return s
}

// NewDataSummary describes a dataset, encoded by plan, whose bytes have the
// given sha256.
func NewDataSummary(d *tabular.Dataset, plan *encode.Plan, sha string) DataSummary {
	counts := make([]int, len(d.Labels))
	for _, c := range d.Classes {
		counts[c]++
	}
	return DataSummary{
		Source: tabular.DisplayName(d.Table.Name), SHA256: sha, Rows: d.Table.Rows,
		Features: len(d.Features), Inputs: plan.Width(),
		Target: d.Target, Labels: d.Labels, ClassCounts: counts,
	}
}

// Spread is the pooled out-of-fold accuracy, the headline figure, beside
// the mean and sample standard deviation of the fold accuracies.
type Spread struct {
	Pooled float64   `json:"pooled"` // right out-of-fold predictions over all of them
	Mean   float64   `json:"mean"`   // of the fold accuracies
	SD     float64   `json:"sd"`     // of the fold accuracies
	Folds  []float64 `json:"folds"`
	// Repeats is the pooled accuracy of each repeat and RepeatSD its sample
	// sd, with more than one repeat.
	Repeats  []float64 `json:"repeats,omitempty"`
	RepeatSD float64   `json:"repeat_sd,omitempty"`
}

// TableMetrics are the metrics read off a confusion table besides its
// accuracy, which the reports give in their own ways.
type TableMetrics struct {
	BalancedAccuracy float64 `json:"balanced_accuracy"`
	MacroF1          float64 `json:"macro_f1"`
	Kappa            float64 `json:"kappa"`
	MCC              float64 `json:"mcc"` // Matthews correlation, multi-class form
}

func tableMetrics(c *evaluate.Confusion) TableMetrics {
	return TableMetrics{BalancedAccuracy: c.BalancedAccuracy(), MacroF1: c.MacroF1(), Kappa: c.Kappa(), MCC: c.Matthews()}
}

// ConfusionDetail is a confusion table with its per-class metrics.
type ConfusionDetail struct {
	Confusion *evaluate.Confusion     `json:"confusion"`
	Classes   []evaluate.ClassMetrics `json:"classes"`
	Averages  Averages                `json:"averages"`
	// AccuracyInterval is the 95% Wilson interval of the accuracy.
	AccuracyInterval evaluate.Interval `json:"accuracy_wilson95"`
}

func confusionDetail(c *evaluate.Confusion) ConfusionDetail {
	return ConfusionDetail{Confusion: c, Classes: c.PerClass(), Averages: averagesOf(c), AccuracyInterval: c.AccuracyInterval()}
}

// MethodSummary is the cross-validated outcome of a baseline.
type MethodSummary struct {
	Pooled   float64 `json:"pooled"`   // pooled out-of-fold accuracy
	Accuracy float64 `json:"accuracy"` // mean of the fold accuracies
	SD       float64 `json:"sd"`       // their sample sd
	TableMetrics
	// Note explains a result a reader would ask about, such as a baseline
	// that predicts one class for every row.
	Note string `json:"note,omitempty"`
}

// Baselines are the methods cross-validated beside the delta rule.
type Baselines struct {
	Majority MethodSummary `json:"majority"`
	Hebbian  MethodSummary `json:"hebbian"`
}

// CVReport is the cross-validated outcome of the main method with its
// baselines, over the same folds.
type CVReport struct {
	Method   string `json:"method"`
	Folds    int    `json:"folds"`
	Repeats  int    `json:"repeats"`
	Seed     uint64 `json:"seed"`
	Accuracy Spread `json:"accuracy"`
	TableMetrics
	ConfusionDetail
	Baselines Baselines `json:"baselines"`
	// Scores are the figures read from the out-of-fold scores.
	Scores *ScoreFigures `json:"scores,omitempty"`
}

// NewCVReport gathers the cross-validation results of the main method and
// its majority and Hebbian baselines.
func NewCVReport(seed uint64, main, majority, hebbian *evaluate.CVResult) *CVReport {
	r := &CVReport{
		Method:          main.Method,
		Folds:           len(main.FoldAccuracy) / len(main.RepeatAccuracy),
		Repeats:         len(main.RepeatAccuracy),
		Seed:            seed,
		Accuracy:        spread(main),
		TableMetrics:    tableMetrics(main.Confusion),
		ConfusionDetail: confusionDetail(main.Confusion),
		Baselines:       Baselines{Majority: summarise(majority), Hebbian: summarise(hebbian)},
	}
	r.Baselines.Hebbian.Note = hebbianNote(hebbian)
	return r
}

func spread(r *evaluate.CVResult) Spread {
	s := Spread{Pooled: r.Pooled, Mean: r.Mean, SD: r.SD, Folds: r.FoldAccuracy}
	if len(r.RepeatAccuracy) > 1 {
		s.Repeats, s.RepeatSD = r.RepeatAccuracy, r.RepeatSD
	}
	return s
}

func summarise(r *evaluate.CVResult) MethodSummary {
	return MethodSummary{Pooled: r.Pooled, Accuracy: r.Mean, SD: r.SD, TableMetrics: tableMetrics(r.Confusion)}
}

// hebbianNote says why the Hebbian baseline predicts one class for every
// row, when it does: its weights are the mean of target × input, so on
// unbalanced classes, or inputs that are on for most rows of every class,
// the bias and the shared inputs favour the larger class (common
// practice).
func hebbianNote(r *evaluate.CVResult) string {
	cols, predicted := r.Confusion.ColTotals(), -1
	for j, n := range cols {
		if n == 0 {
			continue
		}
		if predicted >= 0 {
			return ""
		}
		predicted = j
	}
	if predicted < 0 {
		return ""
	}
	return fmt.Sprintf("the Hebbian baseline predicts %q for every row: its weights are the mean of target × input, and inputs that are on for most rows of every class favour the largest class", r.Confusion.Labels[predicted])
}

// FitReport is what `deltafit fit` reports.
type FitReport struct {
	Data     DataSummary     `json:"data"`
	Plan     PlanSummary     `json:"plan"`
	Training TrainingSummary `json:"training"`
	CV       *CVReport       `json:"cv,omitempty"`
	Model    string          `json:"model,omitempty"` // path of the model file written
	// History is the learning curve of the fit on all rows, epoch by epoch.
	History  []fit.EpochStats `json:"history"`
	Settings *Settings        `json:"settings,omitempty"`
}

// PlanSummary is how the feature columns were encoded.
type PlanSummary struct {
	Columns []ColumnPlan `json:"columns"`
	// Choice says how the auto numeric encoding was chosen; absent when the
	// encoding was given.
	Choice *evaluate.EncodingChoice `json:"auto,omitempty"`
	// QuantileRankError is the plan's bound on the rank error of its
	// quantile cuts, as a fraction of the rows (encode.Plan), when they
	// come from a sketch; absent when they are exact.
	QuantileRankError float64 `json:"quantile_rank_error,omitempty"`
}

// ColumnPlan is the encoding of one feature column.
type ColumnPlan struct {
	Column   string `json:"column"`
	Kind     string `json:"kind"`
	Encoding string `json:"encoding"`
	Units    int    `json:"units"`
	Missing  bool   `json:"missing_unit"`
}

// NewPlanSummary summarises a plan and, for an auto encoding, its choice.
func NewPlanSummary(plan *encode.Plan, choice *evaluate.EncodingChoice) PlanSummary {
	s := PlanSummary{Columns: make([]ColumnPlan, len(plan.Features)), Choice: choice, QuantileRankError: plan.QuantileRankError}
	for i := range plan.Features {
		f := &plan.Features[i]
		s.Columns[i] = ColumnPlan{Column: f.Column, Kind: f.Kind.String(), Encoding: f.Method, Units: f.Width(), Missing: f.Missing}
	}
	return s
}

// NewFittedReport reports a fit without cross-validation on the data
// that data describes, such as a fit on data larger than memory;
// modelPath is where the model file was written, "" for none.
func NewFittedReport(f *evaluate.Fitted, data DataSummary, modelPath string) *FitReport {
	return &FitReport{
		Data:     data,
		Plan:     NewPlanSummary(f.Classifier.Plan, f.Encoding),
		Training: trainingSummary(f.Result.Network, NewTraining(f.Result), data.Rows),
		Model:    modelPath,
		History:  f.Result.History,
	}
}

// NewFitReport reports a study of d (whose bytes have the given sha256),
// cross-validated with seed when it has folds; modelPath is where the model
// file was written, "" for none.
func NewFitReport(s *evaluate.Study, d *tabular.Dataset, sha string, seed uint64, modelPath string) *FitReport {
	r := NewFittedReport(s.Fitted, NewDataSummary(d, s.Fitted.Classifier.Plan, sha), modelPath)
	if s.Main != nil {
		r.CV = NewCVReport(seed, s.Main, s.Majority, s.Hebbian)
	}
	return r
}

// NewScoredDataSummary describes labelled data of the given source and
// sha256 scored by classifier c into confusion table t.
func NewScoredDataSummary(source, sha string, c *model.Classifier, t *evaluate.Confusion) DataSummary {
	return DataSummary{
		Source: tabular.DisplayName(source), SHA256: sha, Rows: t.Total(),
		Features: len(c.Plan.Features), Inputs: c.Plan.Width(),
		Target: c.Target, Labels: c.Labels, ClassCounts: t.RowTotals(),
	}
}

// EvaluationReport is what `deltafit evaluate` reports: a saved model's
// confusion table and metrics on labelled data.
type EvaluationReport struct {
	Data     DataSummary `json:"data"`
	Model    string      `json:"model"`
	Accuracy float64     `json:"accuracy"`
	TableMetrics
	ConfusionDetail
	Scores   *ScoreFigures `json:"scores,omitempty"`
	Settings *Settings     `json:"settings,omitempty"`
}

// NewEvaluationReport reads the metrics off a confusion table.
func NewEvaluationReport(data DataSummary, model string, c *evaluate.Confusion) *EvaluationReport {
	return &EvaluationReport{
		Data: data, Model: model, Accuracy: c.Accuracy(),
		TableMetrics: tableMetrics(c), ConfusionDetail: confusionDetail(c),
	}
}

// WriteJSON writes v as indented JSON with a final newline.
func WriteJSON(w io.Writer, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// WriteFitReport writes r in the given format.
func WriteFitReport(w io.Writer, format Format, r *FitReport) error {
	return writeReport(w, format, r, "deltafit fit", r.Data, func(p *printer) {
		p.training(r)
	})
}

// writeReport writes r as JSON, or as text or Markdown: a heading, the
// data summary, then what body prints.
func writeReport(w io.Writer, format Format, r any, title string, data DataSummary, body func(*printer)) error {
	if format == JSON {
		return WriteJSON(w, r)
	}
	p := &printer{w: w, markdown: format == Markdown}
	p.heading(title)
	p.data(data)
	body(p)
	return p.err
}

// planColumnsShown is the most columns the text report lists in its
// encoding table; JSON lists them all.
const planColumnsShown = 12

func (p *printer) plan(s PlanSummary) {
	if c := s.Choice; c != nil {
		var scores []string
		for _, k := range c.Candidates {
			scores = append(scores, k.Encoding+" "+num(k.Accuracy))
		}
		if len(scores) > 0 {
			p.line("encoding: auto chose %s for numeric columns (%s; accuracy on %s: %s)", c.Chosen, c.Basis, count(c.CheckRows, "held-out row"), strings.Join(scores, ", "))
		} else {
			p.line("encoding: auto chose %s for numeric columns (%s)", c.Chosen, c.Basis)
		}
	}
	if e := s.QuantileRankError; e > 0 {
		p.line("quantile cuts: from a bounded sketch, each within %s of its exact rank", strconv.FormatFloat(100*e, 'g', 3, 64)+"% of the rows")
	}
	rows := make([][]string, 0, min(len(s.Columns), planColumnsShown))
	for i, c := range s.Columns {
		if i == planColumnsShown {
			break
		}
		encoding := c.Encoding
		if c.Missing {
			encoding += " + missing"
		}
		rows = append(rows, []string{c.Column, c.Kind, encoding, strconv.Itoa(c.Units)})
	}
	if len(rows) == 0 {
		return
	}
	if len(s.Columns) > planColumnsShown {
		p.subheading(fmt.Sprintf("encoding of the first %d of %d feature columns (all in --format json)", planColumnsShown, len(s.Columns)))
	} else {
		p.subheading("encoding of the feature columns")
	}
	p.table([]string{"column", "kind", "encoding", "units"}, rows, nil)
}

func (p *printer) training(r *FitReport) {
	p.plan(r.Plan)
	t := r.Training
	p.line("training: %s rule, %s units, rate %s (%s)", t.Rule, t.Unit, num(t.Rate), rateNote(t))
	p.line("          %s (stop: %s), %s in %s (accuracy %s), loss %s",
		count(t.Epochs, "epoch"), stopNote(t), count(t.Errors, "training error"), count(r.Data.Rows-t.HoldoutRows, "row"), num(t.Accuracy), num(t.Loss))
	if note := weightsNote(t); note != "" {
		p.line("          %s", note)
	}
	if r.Model != "" {
		p.line("model: written to %s", r.Model)
	}
	p.curve(Curve(r.History))
	if r.CV != nil {
		p.cv(r.CV)
	}
	if r.Settings != nil {
		p.settings(*r.Settings)
	}
}

// WriteEvaluationReport writes r in the given format.
func WriteEvaluationReport(w io.Writer, format Format, r *EvaluationReport) error {
	return writeReport(w, format, r, "deltafit evaluate", r.Data, func(p *printer) {
		p.evaluation(r)
	})
}

func (p *printer) evaluation(r *EvaluationReport) {
	p.line("model: %s", r.Model)
	p.line("accuracy %s, balanced accuracy %s, macro F1 %s, Cohen's kappa %s",
		num(r.Accuracy), num(r.BalancedAccuracy), num(r.MacroF1), num(r.Kappa))
	p.confusion("confusion table (rows: true class, columns: predicted)", r.Confusion)
	p.classes(r.Classes)
	p.agreement(r.ConfusionDetail, r.MCC)
	p.scoreFigures("from the scores", r.Scores)
	if r.Settings != nil {
		p.settings(*r.Settings)
	}
}

func rateNote(t TrainingSummary) string {
	how := "given"
	if t.RateAuto {
		how = "automatic"
	}
	switch {
	case t.RateBoundName == fit.BoundNone && t.RateAuto:
		return how + ": 1/rows, one pass"
	case t.RateBoundName == fit.BoundNone:
		return how + ", one pass"
	case t.RateBoundName == fit.BoundEveryRow:
		return fmt.Sprintf("%s; every row's update stable below %s = %s; λmax %s", how, t.RateBoundFormula, num(t.RateBound), num(t.LambdaMax))
	case t.RateBoundName == fit.BoundMean:
		return fmt.Sprintf("%s; λmax %s, stable below %s = %s", how, num(t.LambdaMax), t.RateBoundFormula, num(t.RateBound))
	case t.LambdaMax <= 0:
		return how
	}
	// A model file that predates the named bounds.
	return fmt.Sprintf("%s; λmax %s, stable below 2/λmax = %s", how, num(t.LambdaMax), num(t.StableBelow))
}

// stopNote says why training stopped and, when the rule says more than
// its reason, how.
func stopNote(t TrainingSummary) string {
	if t.StopRule == "" || t.StopRule == t.Stop || t.Stop == fit.StopEpochs || t.Stop == fit.StopOnePass {
		return t.Stop
	}
	return t.Stop + ", " + t.StopRule
}

// weightsNote says which weights the model holds when they are not simply
// those of the last update: averaged, or of an earlier epoch.
func weightsNote(t TrainingSummary) string {
	var parts []string
	if t.AverageFrom > 0 {
		parts = append(parts, fmt.Sprintf("weights: the average over the updates of epochs %d to %d", t.AverageFrom, t.KeptEpoch))
	}
	if t.HoldoutRows > 0 {
		parts = append(parts, fmt.Sprintf("kept epoch %d, lowest loss on the %s held out", t.KeptEpoch, count(t.HoldoutRows, "row")))
	}
	return strings.Join(parts, "; ")
}

// printer writes the text and Markdown reports, keeping the first error.
type printer struct {
	w        io.Writer
	markdown bool
	err      error
}

func (p *printer) line(format string, args ...any) {
	if p.markdown {
		format += "  " // a Markdown line break
	}
	p.raw(format, args...)
}

// raw writes one line as it is.
func (p *printer) raw(format string, args ...any) {
	if p.err == nil {
		_, p.err = fmt.Fprintf(p.w, format+"\n", args...)
	}
}

func (p *printer) blank() {
	if p.err == nil {
		_, p.err = io.WriteString(p.w, "\n")
	}
}

func (p *printer) heading(title string) {
	if p.markdown {
		p.raw("## %s", title)
		p.blank()
	}
}

func (p *printer) subheading(title string) {
	p.blank()
	if p.markdown {
		p.raw("### %s", title)
		p.blank()
		return
	}
	p.raw("%s", title)
}

func (p *printer) data(d DataSummary) {
	encoding := " encoded as " + count(d.Inputs, "input unit")
	if d.Raw {
		encoding = ", not encoded (raw space)"
	}
	p.line("data: %s, %s, %s%s", d.Source, count(d.Rows, "row"), count(d.Features, "feature column"), encoding)
	p.line("target: %s, %d classes (%s)", d.Target, len(d.Labels), countList(d.Labels, d.ClassCounts))
}

func (p *printer) cv(r *CVReport) {
	title := fmt.Sprintf("cross-validation: %d stratified folds, seed %d; encoding fitted on each training fold", r.Folds, r.Seed)
	if r.Repeats > 1 {
		title = fmt.Sprintf("cross-validation: %d stratified folds repeated %d times, seed %d; encoding fitted on each training fold", r.Folds, r.Repeats, r.Seed)
	}
	p.subheading(title)
	method := r.Method
	if method == "hebbian" { // the fitted rule is also the baseline's: tell the rows apart
		method = "hebbian (fitted)"
	}
	p.table([]string{"method", "accuracy", "fold mean", "fold sd", "balanced accuracy", "macro F1", "kappa", "MCC"}, [][]string{
		methodRow(method, MethodSummary{Pooled: r.Accuracy.Pooled, Accuracy: r.Accuracy.Mean, SD: r.Accuracy.SD, TableMetrics: r.TableMetrics}),
		methodRow("hebbian", r.Baselines.Hebbian),
		methodRow("majority", r.Baselines.Majority),
	}, nil)
	p.line("accuracy is pooled: right out-of-fold predictions over all rows; fold mean and sd are over the %d folds", r.Folds*r.Repeats)
	if note := r.Baselines.Hebbian.Note; note != "" {
		p.line("%s", note)
	}
	if r.Repeats > 1 {
		p.line("over the %d repeats the pooled accuracy of %s has sd %s", r.Repeats, r.Method, num(r.Accuracy.RepeatSD))
	}
	confusion := "confusion table, " + r.Method + " rule, out-of-fold (rows: true class, columns: predicted)"
	if r.Repeats > 1 {
		confusion = "confusion table, " + r.Method + " rule, out-of-fold, every repeat (rows: true class, columns: predicted)"
	}
	p.confusion(confusion, r.Confusion)
	p.classes(r.Classes)
	p.agreement(r.ConfusionDetail, r.MCC)
	p.scoreFigures("from the out-of-fold scores", r.Scores)
}

func methodRow(name string, m MethodSummary) []string {
	return []string{name, num(m.Pooled), num(m.Accuracy), num(m.SD), num(m.BalancedAccuracy), num(m.MacroF1), num(m.Kappa), num(m.MCC)}
}

func (p *printer) confusion(title string, c *evaluate.Confusion) {
	p.subheading(title)
	header := append([]string{"true \\ predicted"}, c.Labels...)
	header = append(header, "total")
	rowTotals, colTotals := c.RowTotals(), c.ColTotals()
	rows := make([][]string, len(c.Matrix))
	for i, counts := range c.Matrix {
		row := []string{c.Labels[i]}
		for _, n := range counts {
			row = append(row, strconv.Itoa(n))
		}
		rows[i] = append(row, strconv.Itoa(rowTotals[i]))
	}
	footer := []string{"total"}
	for _, n := range colTotals {
		footer = append(footer, strconv.Itoa(n))
	}
	footer = append(footer, strconv.Itoa(c.Total()))
	p.table(header, rows, footer)
}

// classes prints the per-class figures: each class with its true and
// predicted rows, then recall (found / true rows), precision (right /
// predicted rows) and F1.
func (p *printer) classes(classes []evaluate.ClassMetrics) {
	p.subheading("by class")
	rows := make([][]string, len(classes))
	for i, m := range classes {
		rows[i] = []string{m.Label, strconv.Itoa(m.Support), strconv.Itoa(m.Predicted), num(m.Recall), num(m.Precision), num(m.F1)}
	}
	p.table([]string{"class", "true rows", "predicted rows", "recall", "precision", "F1"}, rows, nil)
}

// table renders one table: in the house look in text, a pipe table in
// Markdown. A column of numbers is right-aligned, any other left-aligned.
//
// The house look has no outer frame and no column rules: columns are set
// apart by blank space, the header is underlined by one light rule per
// column and a footer (totals) is set off by the same rules. Lines carry
// no trailing blanks.
func (p *printer) table(header []string, rows [][]string, footer []string) {
	if p.err != nil {
		return
	}
	cells := tw.CellAlignment{PerColumn: columnAlignment(len(header), rows, footer)}
	opts := []tablewriter.Option{
		tablewriter.WithHeaderAutoFormat(tw.Off),
		tablewriter.WithFooterAutoFormat(tw.Off),
		tablewriter.WithHeaderAlignmentConfig(cells),
		tablewriter.WithRowAlignmentConfig(cells),
		tablewriter.WithFooterAlignmentConfig(cells),
	}
	if p.markdown {
		opts = append(opts, tablewriter.WithRenderer(renderer.NewMarkdown()))
	} else {
		opts = append(opts, tablewriter.WithRendition(houseRendition()))
	}
	var buf bytes.Buffer
	t := tablewriter.NewTable(&buf, opts...)
	t.Header(header)
	if err := t.Bulk(rows); err != nil {
		p.err = err
		return
	}
	if footer != nil {
		if p.markdown {
			// Markdown has no footer row: the totals are an ordinary row.
			if err := t.Append(footer); err != nil {
				p.err = err
				return
			}
		} else {
			t.Footer(footer)
		}
	}
	if p.err = t.Render(); p.err != nil {
		return
	}
	for line := range strings.Lines(buf.String()) {
		p.raw("%s", strings.TrimRight(line, " \n"))
	}
}

// columnAlignment aligns right the columns whose cells (rows and footer)
// are all numbers or empty, and the rest left. The first column, which
// names the rows, is always left-aligned.
func columnAlignment(columns int, rows [][]string, footer []string) []tw.Align {
	align := make([]tw.Align, columns)
	for j := range align {
		align[j] = tw.AlignRight
		if j == 0 {
			align[j] = tw.AlignLeft
			continue
		}
		for _, row := range append(rows, footer) {
			if j < len(row) && row[j] != "" {
				if _, err := strconv.ParseFloat(row[j], 64); err != nil {
					align[j] = tw.AlignLeft
					break
				}
			}
		}
	}
	return align
}

// houseRendition is the look of every text table: light rules under the
// header and over the footer, blank space between columns, no frame.
func houseRendition() tw.Rendition {
	symbols := tw.NewSymbolCustom("deltafit").
		WithRow("─").WithColumn(" ").WithCenter(" ").
		WithHeaderMid(" ").WithBottomMid(" ")
	return tw.Rendition{
		Borders: tw.Border{Left: tw.Off, Right: tw.Off, Top: tw.Off, Bottom: tw.Off},
		Symbols: symbols,
		Settings: tw.Settings{
			Separators: tw.Separators{BetweenColumns: tw.On},
			Lines:      tw.Lines{ShowHeaderLine: tw.On, ShowFooterLine: tw.On},
		},
	}
}

// count writes n with a noun in the singular or plural.
func count(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return strconv.Itoa(n) + " " + noun + "s"
}

// num formats a metric with four decimals, or in %g for very small or
// very large magnitudes.
func num(x float64) string {
	if x != 0 && (x < 1e-3 && x > -1e-3 || x >= 1e6 || x <= -1e6) {
		return strconv.FormatFloat(x, 'g', 4, 64)
	}
	return strconv.FormatFloat(x, 'f', 4, 64)
}
