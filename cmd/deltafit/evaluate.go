package main

import (
	"context"
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/ingest/tabular"
)

type evaluateOptions struct {
	modelInput
	format  string
	outputs reportOutputs
}

func newEvaluateCmd() *cobra.Command {
	var opts evaluateOptions
	cmd := &cobra.Command{
		Use:   "evaluate --model MODEL DATA [flags]",
		Short: "Score a saved model on labelled rows: confusion table and metrics",
		Long: `Evaluate classifies the rows of DATA (a path, or - for stdin) with a saved
model and compares the predictions with the model's target column, which
DATA must have. It prints the confusion table (rows: true class, columns:
predicted), accuracy, balanced accuracy, macro F1, Cohen's kappa, and by
class its true and predicted rows, recall, precision and F1.
` + exitStatusHelp,
		Example: `  deltafit evaluate --model model.json holdout.csv
  deltafit evaluate --model model.json holdout.csv --format json | jq .accuracy`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runEvaluate(cmd.Context(), opts, args[0], cmd.InOrStdin(), cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	opts.modelInput.add(cmd.Flags())
	cmd.Flags().StringVar(&opts.format, "format", "text", "report format: text, json or markdown")
	opts.outputs.add(cmd.Flags())
	return cmd
}

func runEvaluate(_ context.Context, opts evaluateOptions, path string, stdin io.Reader, stdout, stderr io.Writer) error {
	format, err := reportFormat(opts.format)
	if err != nil {
		return err
	}
	if err := opts.outputs.check(path, opts.model); err != nil {
		return err
	}
	model, table, sha, err := opts.load(path, stdin, stderr)
	if err != nil {
		return err
	}
	positive, err := opts.outputs.positiveClass(model.Labels)
	if err != nil {
		return err
	}
	table = (&missingPolicy{}).apply(table, model.Target, nil, stderr)
	if sha == model.Data.SHA256 {
		fmt.Fprintf(stderr, "deltafit: warning: %s: these are the bytes the model was trained on (same sha256): the figures are optimistic; evaluate on rows the model has not seen, or cross-validate with fit --folds\n", tabular.DisplayName(path))
	}
	scoring, stats, err := evaluate.ScoreTableRows(&model.Classifier, table)
	if err != nil {
		return err
	}
	if err := opts.checkEncoding(stderr, path, stats); err != nil {
		return err
	}
	confusion := scoring.Confusion
	data := export.NewScoredDataSummary(path, sha, &model.Classifier, confusion)
	report := export.NewEvaluationReport(data, opts.model, confusion)
	if err := evaluationFigures(report, model, &evaluateInputs{modelPath: opts.model, dataPath: path, sha: sha, scored: scoring}, positive); err != nil {
		return err
	}
	if err := writeEvaluationOutputs(report, model, opts.outputs); err != nil {
		return err
	}
	return export.WriteEvaluationReport(stdout, format, report)
}
