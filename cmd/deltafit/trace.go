package main

import (
	"context"
	"io"

	"github.com/spf13/cobra"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/ingest/tabular"
)

type traceOptions struct {
	input   inputFlags
	missing missingPolicy
	learn   learnFlags
	steps   int
	top     int
	format  string
}

func newTraceCmd() *cobra.Command {
	var opts traceOptions
	cmd := &cobra.Command{
		Use:   "trace DATA --target COLUMN [--steps N] [flags]",
		Short: "Show the first weight updates of a fit, row by row",
		Long: `Trace fits the model on all rows of DATA (a path, or - for stdin) exactly as
fit does, and shows its first N weight updates: for each row presented, its
number in the input, the targets, the outputs before the update, the error
t − y, the largest weight changes (input unit → output unit, with the
input's activity x) and the loss so far. The delta rule changes each weight
by rate · (t − y) · x: toward the target, in proportion to the sending
unit's activity, which the trace lets you check by hand. Input units are
named as the encoding plan names them.
` + exitStatusHelp,
		Example: `  deltafit trace testdata/xor.csv --target y --steps 8
  deltafit trace testdata/iris.csv --target species --steps 3 --format json | jq '.updates[0].changes'`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runTrace(cmd.Context(), opts, args[0], cmd.InOrStdin(), cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	opts.input.add(cmd.Flags())
	opts.missing.add(cmd.Flags())
	opts.learn.add(cmd)
	cmd.Flags().IntVar(&opts.steps, "steps", 10, "how many updates to show, from the first")
	cmd.Flags().IntVar(&opts.top, "top", 4, "how many of each update's weight changes to show, largest |Δw| first (0: all)")
	cmd.Flags().StringVar(&opts.format, "format", "text", "report format: text, json or markdown")
	return cmd
}

// maxTraceSteps caps --steps: a trace is for reading.
const maxTraceSteps = 100000

func runTrace(ctx context.Context, opts traceOptions, path string, stdin io.Reader, stdout, stderr io.Writer) error {
	format, err := reportFormat(opts.format)
	if err != nil {
		return err
	}
	if opts.steps < 1 || opts.steps > maxTraceSteps {
		return usagef("--steps %d: give 1 to %d", opts.steps, maxTraceSteps)
	}
	if opts.top < 0 {
		return usagef("--top %d: give 0 (all) or more", opts.top)
	}
	learner, d, sha, err := loadDataset(opts.input, opts.learn, &opts.missing, path, stdin, stderr)
	if err != nil {
		return err
	}
	learner.Fit.Warn = warnOnce(stderr)
	trace, err := evaluate.TraceFit(ctx, d, learner, opts.steps, opts.top)
	if err != nil {
		return divergenceHint(err, opts.learn)
	}
	return export.WriteTraceReport(stdout, format, &export.TraceReport{
		Data: tabular.DisplayName(path), SHA256: sha, Rows: d.Table.Rows, Seed: opts.learn.seed, Tool: export.Tool(), Trace: trace,
	})
}
