package main

import (
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/spf13/pflag"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/fit"
	"deltafit/ingest/tabular"
)

// reportOutputs are the flags of fit and evaluate that write more than the
// report on stdout.
type reportOutputs struct {
	report   string // --report FILE: the report again, in the format of its extension
	plot     string // --plot DIR: the plots, as PNG and SVG
	positive string // --positive LABEL: the class the ROC curve ranks rows for
}

func (o *reportOutputs) add(fs *pflag.FlagSet) {
	fs.StringVar(&o.report, "report", "", "also write the report to this file, in the format of its extension: .txt, .md, .json or .html")
	fs.StringVar(&o.plot, "plot", "", "write the plots (PNG and SVG) into this directory, made if missing")
	fs.StringVar(&o.positive, "positive", "", "with two classes: the class whose scores rank the rows for the ROC curve (default: the second label)")
}

// check refuses, before any work, a report file of no known format and
// output paths that name an input.
func (o *reportOutputs) check(inputs ...string) error {
	if o.report != "" {
		if _, err := export.FormatOfPath(o.report); err != nil {
			return usagef("--report %s: give a file ending in .txt, .md, .json or .html", o.report)
		}
		if o.report == "-" {
			return usagef("--report -: the report already goes to stdout; give a file name")
		}
	}
	for _, in := range inputs {
		if err := checkOutput(o.report, in); err != nil {
			return err
		}
	}
	if o.plot != "" {
		if fi, err := os.Stat(o.plot); err == nil && !fi.IsDir() {
			return usagef("--plot %s: the plots go into a directory, and this is a file", o.plot)
		}
	}
	return nil
}

// positiveClass returns the index of the positive class among labels, -1
// for more than two classes; a --positive that names no class, or given
// with more than two classes, is a usage error.
func (o *reportOutputs) positiveClass(labels []string) (int, error) {
	k, err := export.PositiveClass(labels, o.positive)
	if err != nil {
		return -1, usagef("--positive %q: %v", o.positive, strings.TrimPrefix(err.Error(), "export: "))
	}
	return k, nil
}

// writeReportFile writes the report again to --report, in the format of
// the file's extension: write writes the text-like formats, html the page.
func (o *reportOutputs) writeReportFile(write func(io.Writer, export.Format) error, html func(io.Writer) error) error {
	if o.report == "" {
		return nil
	}
	format, err := export.FormatOfPath(o.report)
	if err != nil {
		return err
	}
	return export.WriteFile(o.report, func(w io.Writer) error {
		if format == export.HTML {
			return html(w)
		}
		return write(w, format)
	})
}

// oofFormat checks --oof, which needs folds, and returns the table format
// its extension names: .csv, .jsonl, .arrow or .arrows (an Arrow IPC
// stream), .parquet.
func oofFormat(path string, folds int, data string) (export.TableFormat, error) {
	if path == "" {
		return "", nil
	}
	if folds == 0 {
		return "", usagef("--oof %s: the out-of-fold predictions need cross-validation; add --folds K", path)
	}
	if path == "-" {
		return "", usagef("--oof -: the report goes to stdout; give the predictions a file name")
	}
	format, ok := map[string]export.TableFormat{
		".csv": export.TableCSV, ".jsonl": export.TableJSONL, ".arrow": export.TableArrow, ".arrows": export.TableArrow, ".parquet": export.TableParquet,
	}[strings.ToLower(filepath.Ext(path))]
	if !ok {
		return "", usagef("--oof %s: the format is read from the extension: .csv, .jsonl, .arrow (or .arrows) or .parquet", path)
	}
	return format, checkOutput(path, data)
}

// studyFigures adds to a fit report its settings and, with folds, the
// figures read from the out-of-fold scores.
func studyFigures(r *export.FitReport, s *evaluate.Study, d *tabular.Dataset, learner fit.Options, opts fitOptions, path, sha string, positive int) error {
	settings := export.NewSettings(path, sha, d.Table.Rows, d.Target, s.Fitted.Classifier.Plan,
		opts.learn.modelOptions(opts.input.kinds), export.NewTraining(s.Fitted.Result), learner)
	if s.Main != nil {
		settings.Folds, settings.Repeats = opts.folds, opts.repeats
	}
	if positive >= 0 {
		settings.Positive = d.Labels[positive]
	}
	r.Settings = &settings
	if s.Main == nil {
		return nil
	}
	scored, err := s.Main.Scored(d)
	if err != nil {
		return err
	}
	r.CV.Scores, err = export.ScoreFiguresOf(scored, d.Labels, s.Fitted.Result.Network.Unit, positive)
	return err
}

// evaluationFigures adds to an evaluation report its settings and the
// figures read from the scores of the rows.
func evaluationFigures(r *export.EvaluationReport, m *export.Model, p *evaluateInputs, positive int) error {
	settings := export.ModelSettings(m, p.modelPath, p.dataPath, p.sha, r.Confusion.Total())
	if positive >= 0 {
		settings.Positive = m.Labels[positive]
	}
	r.Settings = &settings
	var err error
	r.Scores, err = export.NewScoreFigures(p.scores, m.Labels)
	return err
}

// evaluateInputs are what evaluate scored: the files, and the scored rows.
type evaluateInputs struct {
	modelPath, dataPath, sha string
	scores                   *evaluate.ScoreTally
}

// writeStudyOutputs writes what fit writes besides the model and the
// report on stdout: the out-of-fold predictions, the plots and the report
// file.
func writeStudyOutputs(r *export.FitReport, s *evaluate.Study, d *tabular.Dataset, opts fitOptions) error {
	if opts.oof != "" {
		format, err := oofFormat(opts.oof, opts.folds, "")
		if err != nil {
			return err
		}
		if err := export.WriteFile(opts.oof, func(w io.Writer) error {
			return export.WriteOutOfFold(w, format, d.Table.Name, d, s.Main.OutOfFold, export.CSVTextAsIs(opts.csvTextAsIs))
		}); err != nil {
			return err
		}
	}
	var figures []*export.Figure
	if opts.outputs.plot != "" || opts.outputs.report != "" {
		var err error
		if figures, err = export.FitFigures(r, s.Fitted.Classifier); err != nil {
			return err
		}
	}
	if opts.outputs.plot != "" {
		if err := export.WritePlots(opts.outputs.plot, figures); err != nil {
			return err
		}
	}
	return opts.outputs.writeReportFile(
		func(w io.Writer, f export.Format) error { return export.WriteFitReport(w, f, r) },
		func(w io.Writer) error {
			return export.WriteHTMLReport(w, &export.HTMLReport{Fit: r, Figures: figures})
		})
}

// writeEvaluationOutputs writes what evaluate writes besides the report on
// stdout: the plots and the report file.
func writeEvaluationOutputs(r *export.EvaluationReport, m *export.Model, o reportOutputs) error {
	var figures []*export.Figure
	if o.plot != "" || o.report != "" {
		var err error
		if figures, err = export.EvaluationFigures(r, m); err != nil {
			return err
		}
	}
	if o.plot != "" {
		if err := export.WritePlots(o.plot, figures); err != nil {
			return err
		}
	}
	return o.writeReportFile(
		func(w io.Writer, f export.Format) error { return export.WriteEvaluationReport(w, f, r) },
		func(w io.Writer) error {
			return export.WriteHTMLReport(w, &export.HTMLReport{Evaluation: r, Figures: figures})
		})
}
