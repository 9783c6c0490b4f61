package main

import (
	"context"
	"io"

	"github.com/spf13/cobra"

	"deltafit/export"
)

type predictOptions struct {
	modelInput
	output string
}

func newPredictCmd() *cobra.Command {
	var opts predictOptions
	cmd := &cobra.Command{
		Use:   "predict --model MODEL DATA [-o FILE]",
		Short: "Classify rows with a saved model",
		Long: `Predict encodes the rows of DATA (a path, or - for stdin) exactly as the
model's training rows were encoded and writes CSV: the 1-based row number,
the predicted label and one score column per class. Columns the model does
not use are ignored; the target column need not be present. Values the model
has no unit for go to the column's "other" unit, with a count on stderr.
Output goes to stdout, or atomically to the file given with -o.
` + exitStatusHelp,
		Example: `  deltafit predict --model model.json new.csv > predictions.csv
  cat new.csv | deltafit predict --model model.json - | cut -d, -f2 | sort | uniq -c`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runPredict(cmd.Context(), opts, args[0], cmd.InOrStdin(), cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	opts.modelInput.add(cmd.Flags())
	cmd.Flags().StringVarP(&opts.output, "output", "o", "", "write the predictions here instead of stdout (- is stdout)")
	return cmd
}

func runPredict(_ context.Context, opts predictOptions, path string, stdin io.Reader, stdout, stderr io.Writer) error {
	for _, input := range []string{path, opts.model} {
		if err := checkOutput(opts.output, input); err != nil {
			return err
		}
	}
	model, table, _, err := opts.load(path, stdin, stderr)
	if err != nil {
		return err
	}
	predictions, stats, err := model.PredictTable(table)
	if err != nil {
		return err
	}
	if err := opts.checkEncoding(stderr, path, stats); err != nil {
		return err
	}
	write := func(w io.Writer) error { return export.WritePredictionsCSV(w, predictions) }
	if opts.output != "" && opts.output != "-" {
		return export.WriteFile(opts.output, write)
	}
	return write(stdout)
}
