package main

import (
	"context"
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"deltafit/evaluate"
	"deltafit/evaluate/separate"
	"deltafit/export"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

type reportOptions struct {
	input    inputFlags
	missing  missingPolicy
	learn    learnFlags
	output   string
	folds    int
	repeats  int
	positive string
}

func newReportCmd() *cobra.Command {
	var opts reportOptions
	cmd := &cobra.Command{
		Use:   "report DATA --target COLUMN -o REPORT.html [flags]",
		Short: "Write the whole study of a table as one HTML page",
		Long: `Report fits the model on all rows of DATA (a path, or - for stdin),
cross-validates it beside the majority-class and Hebbian baselines as fit
--folds does, checks which classes a single layer can separate (as check
does, in the encoding the fit chose), and writes one self-contained HTML
page: the summary and settings, the cross-validation table, the pooled
confusion table, the per-class figures, the plots (inline SVG), the
learning curve, the encoding of each column and the separability verdicts
with their certificates. The page fetches nothing and runs no script; it
reads at phone width and prints.
` + exitStatusHelp,
		Example: `  deltafit report testdata/iris.csv --target species --folds 10 --seed 1 -o iris.html`,
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runReport(cmd.Context(), opts, args[0], cmd.InOrStdin(), cmd.ErrOrStderr())
		},
	}
	opts.input.add(cmd.Flags())
	opts.missing.add(cmd.Flags())
	opts.learn.add(cmd)
	cmd.Flags().StringVarP(&opts.output, "output", "o", "", "write the HTML page here (required)")
	cmd.Flags().IntVar(&opts.folds, "folds", 10, "stratified folds of the cross-validation (at least 2)")
	cmd.Flags().IntVar(&opts.repeats, "repeats", 1, "repeat the cross-validation this many times, each with its own folds")
	cmd.Flags().StringVar(&opts.positive, "positive", "", "with two classes: the class whose scores rank the rows for the ROC curve (default: the second label)")
	return cmd
}

func runReport(ctx context.Context, opts reportOptions, path string, stdin io.Reader, stderr io.Writer) error {
	if opts.output == "" || opts.output == "-" {
		return usagef("-o REPORT.html is required: the page is written to a file")
	}
	if format, err := export.FormatOfPath(opts.output); err != nil || format != export.HTML {
		return usagef("-o %s: the report is an HTML page; give a file ending in .html", opts.output)
	}
	if err := checkOutput(opts.output, path); err != nil {
		return err
	}
	if opts.folds < 2 {
		return usagef("--folds %d: the report cross-validates; give at least 2", opts.folds)
	}
	if opts.repeats < 1 {
		return usagef("--repeats %d: give at least 1", opts.repeats)
	}
	fo := fitOptions{input: opts.input, missing: opts.missing, learn: opts.learn, folds: opts.folds, repeats: opts.repeats,
		outputs: reportOutputs{positive: opts.positive}}
	learner, d, sha, err := loadDataset(opts.input, opts.learn, &opts.missing, path, stdin, stderr)
	if err != nil {
		return err
	}
	learner.Fit.Warn = warnOnce(stderr)
	positive, err := fo.outputs.positiveClass(d.Labels)
	if err != nil {
		return err
	}
	study, err := evaluate.RunStudy(ctx, d, learner, evaluate.StudyOptions{Folds: opts.folds, Repeats: opts.repeats, Seed: opts.learn.seed})
	if err != nil {
		return divergenceHint(err, opts.learn)
	}
	for _, c := range study.SmallClasses {
		fmt.Fprintf(stderr, "deltafit: warning: %s: %s\n", tabular.DisplayName(path), c)
	}
	r := export.NewFitReport(study, d, sha, opts.learn.seed, "")
	if err := studyFigures(r, study, d, learner.Fit, fo, path, sha, positive); err != nil {
		return err
	}
	figures, err := export.FitFigures(r, study.Fitted.Classifier)
	if err != nil {
		return err
	}
	check, err := separate.Check(ctx, d, separate.CheckOptions{Space: separate.Encoded, Plan: chosenPlan(learner.Plan, study.Fitted), Seed: opts.learn.seed})
	if err != nil {
		return err
	}
	page := &export.HTMLReport{Fit: r, Check: check, Figures: figures}
	return export.WriteFile(opts.output, func(w io.Writer) error { return export.WriteHTMLReport(w, page) })
}

// chosenPlan returns the encoding options of a fit with the numeric
// encoding it used: an auto encoding replaced by its choice.
func chosenPlan(plan encode.Options, f *evaluate.Fitted) encode.Options {
	if plan.Numeric.Method != encode.Auto || f.Encoding == nil {
		return plan
	}
	if chosen, err := encode.ParseNumericEncoding(f.Encoding.Chosen); err == nil {
		plan.Numeric = chosen
	}
	return plan
}
