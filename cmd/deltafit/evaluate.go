package main

import (
	"context"
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/ingest/encode"
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
class its true and predicted rows, recall, precision and F1. DATA is read
and scored one record batch at a time: memory does not grow with the
number of rows, but for the ROC curve of two classes, which keeps each
row's score for the positive class (nine bytes a row).
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
	model, readOpts, err := opts.readModel(path, stdin)
	if err != nil {
		return err
	}
	columns := []string{model.Target}
	for _, f := range model.Plan.Features {
		columns = append(columns, f.Column)
	}
	in, err := openStream(path, stdin, stderr, stderr, readOpts, columns, true)
	if err != nil {
		return err
	}
	defer in.close()
	if len(in.Schema().FieldIndices(model.Target)) == 0 {
		var names []string
		for _, f := range in.Schema().Fields() {
			names = append(names, f.Name)
		}
		return tabular.NoTargetColumn(path, model.Target, names)
	}
	positive, err := opts.outputs.positiveClass(model.Labels)
	if err != nil {
		return err
	}
	confusion := evaluate.NewConfusion(model.Labels)
	scores := evaluate.NewScoreTally(len(model.Labels), positive, model.Network.Unit)
	var stats encode.Stats
	var noTarget rowsLeftOut
	for in.Next() {
		batch := noTarget.drop(in.Table(), tabular.MissingTarget(in.Table(), model.Target))
		if batch.Rows == 0 {
			continue
		}
		scored, batchStats, err := evaluate.ScoreTableRows(&model.Classifier, batch)
		if err != nil {
			return err
		}
		if err := opts.checkStrict(path, batchStats); err != nil {
			return err
		}
		stats.Merge(batchStats)
		if err := confusion.Merge(scored.Confusion); err != nil {
			return err
		}
		rows, err := evaluate.ScoredOf(scored.Predictions, scored.Truth)
		if err == nil {
			err = scores.Add(rows)
		}
		if err != nil {
			return err
		}
	}
	in.count.progress.finish()
	if err := in.Err(); err != nil {
		return err
	}
	sha, err := in.sha256()
	if err != nil {
		return err
	}
	name := tabular.DisplayName(path)
	noTarget.warn(stderr, name+": %d %s with no target value left out (first at row %d): a row needs its class to be learned from or scored")
	if confusion.Total() == 0 {
		return &tabular.DataError{File: path, Name: model.Target, Err: fmt.Errorf("no row has a target value to score against")}
	}
	if sha == model.Data.SHA256 {
		fmt.Fprintf(stderr, "deltafit: warning: %s: these are the bytes the model was trained on (same sha256): the figures are optimistic; evaluate on rows the model has not seen, or cross-validate with fit --folds\n", name)
	}
	if err := opts.checkEncoding(stderr, path, stats); err != nil {
		return err
	}
	data := export.NewScoredDataSummary(path, sha, &model.Classifier, confusion)
	report := export.NewEvaluationReport(data, opts.model, confusion)
	if err := evaluationFigures(report, model, &evaluateInputs{modelPath: opts.model, dataPath: path, sha: sha, scores: scores}, positive); err != nil {
		return err
	}
	if err := writeEvaluationOutputs(report, model, opts.outputs); err != nil {
		return err
	}
	return export.WriteEvaluationReport(stdout, format, report)
}
