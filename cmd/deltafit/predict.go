package main

import (
	"context"
	"io"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/spf13/cobra"

	"deltafit/export"
	"deltafit/fit/model"
	"deltafit/ingest/encode"
)

type predictOptions struct {
	modelInput
	out    tableOutput
	scores string
}

// Score scales of predict --scores.
const (
	scoresRaw        = "raw"
	scoresNormalized = "normalized"
)

func newPredictCmd() *cobra.Command {
	var opts predictOptions
	cmd := &cobra.Command{
		Use:   "predict --model MODEL DATA [-o FILE] [--format csv|jsonl|arrow|parquet]",
		Short: "Classify rows with a saved model",
		Long: `Predict encodes the rows of DATA (a path, or - for stdin) exactly as the
model's training rows were encoded and writes one output row per input row:
the columns given with --keep (as the input has them), row (the row's
1-based number in the input), predicted (the label) and score_LABEL for
each class. Columns the model does not use are ignored; the target column
need not be present. Values the model has no unit for go to the column's
"other" unit, with a count on stderr.

DATA is read and scored one record batch at a time, so memory does not
grow with the number of rows. Output goes to stdout as the rows are
scored, or atomically to the file given with -o.

--format csv (default) and jsonl print scores in the shortest form that
reads back as the same 64-bit float; arrow (an Arrow IPC stream, which the
next program reads batch by batch) and parquet store them as float64.

--scores raw (default) prints the output units' values as they are: with
logistic units, each in (0, 1); with linear units (--unit linear, or the
Hebbian rule), any number. --scores normalized divides each row's scores by
their sum, so they sum to 1 (logistic units only). Neither is a calibrated
probability. The nearest is a model of two classes with a logistic unit:
the delta rule's update rate · (target − output) · input is then the
gradient step of logistic regression's log-likelihood, so the score of the
second class estimates its probability as a logistic regression would,
but training stops early (at zero training errors, by default) and nothing
calibrates it; check it on rows the model was not fitted on.
` + exitStatusHelp + `
On failure, a file given with -o is left as it was; rows already written to
stdout stay written.`,
		Example: `  deltafit predict --model model.json new.csv > predictions.csv
  deltafit predict --model model.json new.csv | tail -n +2 | cut -d, -f2 | sort | uniq -c
  cat new.arrows | deltafit predict --model model.json - --format arrow --keep id > scored.arrows`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runPredict(cmd.Context(), opts, args[0], cmd.InOrStdin(), cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	opts.modelInput.add(cmd.Flags())
	opts.out.add(cmd.Flags(), "predictions")
	cmd.Flags().StringVar(&opts.scores, "scores", scoresRaw, "raw: the output units' values; normalized: divided by their sum per row (logistic units only); neither is a calibrated probability")
	return cmd
}

func runPredict(_ context.Context, opts predictOptions, path string, stdin io.Reader, stdout, stderr io.Writer) error {
	format, err := opts.out.tableFormat()
	if err != nil {
		return err
	}
	if opts.scores != scoresRaw && opts.scores != scoresNormalized {
		return usagef("--scores %q: give raw or normalized", opts.scores)
	}
	if err := checkOutputPath("-o", opts.out.output, path, opts.model); err != nil {
		return err
	}
	m, readOpts, err := opts.readModel(path, stdin)
	if err != nil {
		return err
	}
	normalized := opts.scores == scoresNormalized
	if normalized && !m.ScoresNonNegative() {
		return usagef("--scores normalized: the model's %s units can give negative scores, which cannot be divided by their sum; use --scores raw", m.Network.Unit)
	}
	var columns []string
	for _, f := range m.Plan.Features {
		columns = append(columns, f.Column)
	}
	in, err := openStream(path, stdin, stderr, progressTo(stdout, stderr, opts.out.toFile()), readOpts, columns, false)
	if err != nil {
		return err
	}
	defer in.close()
	keepFields, keepIndex, err := in.keepFields(opts.out.keep)
	if err != nil {
		return err
	}
	var stats encode.Stats
	// Scoring the next batch overlaps writing the last.
	type batch struct {
		p    *model.Predictions
		keep []arrow.Array
	}
	score := func(emit func(batch) bool) error {
		for in.Next() {
			p, batchStats, err := m.PredictTable(in.Table())
			if err != nil {
				return err
			}
			if err := opts.checkStrict(path, batchStats); err != nil {
				return err
			}
			stats.Merge(batchStats)
			if normalized {
				if err := p.Normalize(path); err != nil {
					return err
				}
			}
			keep := in.keepArrays(keepIndex)
			for _, a := range keep {
				a.Retain()
			}
			if !emit(batch{p, keep}) {
				return nil
			}
		}
		in.count.progress.finish()
		return in.Err()
	}
	err = opts.out.write(stdout, func(w io.Writer, flush func() error) error {
		pw, err := export.NewPredictionWriter(w, format, path, m.Labels, keepFields, opts.out.tableOptions()...)
		if err != nil {
			return usagef("--keep: %v", err)
		}
		write := func(b batch) error {
			defer releaseArrays(b.keep)
			if err := pw.Write(b.p, b.keep); err != nil {
				return err
			}
			return flush()
		}
		if err := overlap(score, write, func(b batch) { releaseArrays(b.keep) }); err != nil {
			return err
		}
		return pw.Close()
	})
	if err != nil {
		return err
	}
	return opts.checkEncoding(stderr, path, stats)
}
