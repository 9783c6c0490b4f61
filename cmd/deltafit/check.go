package main

import (
	"context"
	"fmt"
	"io"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"deltafit/evaluate/separate"
	"deltafit/export"
	"deltafit/ingest/encode"
)

// exitNotSeparable is check's exit code when --require separable fails.
const exitNotSeparable = 3

type checkOptions struct {
	input   inputFlags
	missing missingPolicy
	learn   learnFlags // the target, --ignore, the encodings and the seed
	space   string
	pairs   bool
	require string
	format  string
}

func newCheckCmd() *cobra.Command {
	var opts checkOptions
	cmd := &cobra.Command{
		Use:   "check DATA --target COLUMN [flags]",
		Short: "Certify whether each class is linearly separable, with rows that prove it",
		Long: `Check decides, for each class against the rest (and with --pairs each pair of
classes), whether a hyperplane can split the rows of DATA (a path, or - for
stdin) without error, in the encoded input units (default) or in the numeric
columns standardized (--space raw).

Not separable: it prints a certificate, a few rows from each side with
non-negative weights summing to 1 per side whose weighted means coincide, so
the convex hulls of the sides meet and no single layer can separate them.
Separable: it prints a witness hyperplane (weights, bias) with its margin.
Both are checked row by row on the data before they are printed; one that
fails the check is reported as "undecided (numerical)" with the reason.
Above ` + strconv.Itoa(separate.MaxInputs) + ` inputs (coordinates) the exact program is not solved, as
its time grows about as the fourth power of the inputs: each split is
"undecided (too many inputs)", unless a pattern on both sides proves it not
separable. Use fewer columns, --numeric zscore or threshold, a smaller
thermometer:K, or --space raw. The raw space names the columns it leaves out.

It also reports conflicting rows (identical inputs, different classes) with
the error floor they impose on any classifier, and a profile of the data:
class counts and imbalance, constant columns, missing cells, categorical
cardinalities, single columns that split a class off on their own, and
duplicate rows (same features and class), which cross-validation may put on
both sides of a fold.
` + exitStatusHelp + `
With --require separable: 3 when any split is not proven separable (not
separable, or undecided).`,
		Example: `  deltafit check testdata/iris.csv --target species --space raw --pairs
  deltafit check testdata/xor.csv --target y --require separable || echo "needs a hidden layer"
  deltafit check runs.csv --target outcome --ignore run_id --format json | jq '.splits[].separable'`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runCheck(cmd.Context(), opts, args[0], cmd.InOrStdin(), cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	opts.input.add(cmd.Flags())
	opts.missing.add(cmd.Flags())
	opts.learn.add(cmd)
	cmd.Flags().Lookup("seed").Usage = "seed of the order in which the solver takes rows into its working set"
	for _, name := range []string{"rule", "unit", "epochs", "rate"} {
		_ = cmd.Flags().MarkHidden(name) // training flags: check trains nothing
	}
	cmd.Flags().StringVar(&opts.space, "space", string(separate.Encoded), "where to compare rows: encoded (input units) or raw (numeric columns, standardized)")
	cmd.Flags().BoolVar(&opts.pairs, "pairs", false, "also check each pair of classes")
	cmd.Flags().StringVar(&opts.require, "require", "", `"separable": exit 3 unless every split is proven separable`)
	cmd.Flags().StringVar(&opts.format, "format", "text", "report format: text, json or markdown")
	return cmd
}

func runCheck(_ context.Context, opts checkOptions, path string, stdin io.Reader, stdout, stderr io.Writer) error {
	format, err := reportFormat(opts.format)
	if err != nil {
		return err
	}
	space, err := separate.ParseSpace(opts.space)
	if err != nil {
		return usagef("--space: %v", err)
	}
	if opts.require != "" && opts.require != "separable" {
		return usagef(`--require %q: the only requirement is "separable"`, opts.require)
	}
	learner, d, sha, err := loadDataset(opts.input, opts.learn, opts.missing, path, stdin, stderr)
	if err != nil {
		return err
	}
	if learner.Plan.Numeric.Method == encode.Auto {
		// Nothing is trained here to choose on: the encoded space uses
		// thermometer units.
		learner.Plan.Numeric = encode.AutoCandidates(learner.Plan.Numeric)[1]
	}
	splits := newProgress(stderr, -1, "splits", false)
	progress := func(done, total int) {
		splits.bar.ChangeMax(total)
		splits.set(int64(done))
	}
	if splits == nil {
		progress = nil
	}
	report, err := separate.Check(d, separate.CheckOptions{Space: space, Plan: learner.Plan, Pairs: opts.pairs, Seed: opts.learn.seed, Progress: progress})
	splits.finish()
	if err != nil {
		return err
	}
	data := export.NewDataSummary(d, &encode.Plan{}, sha)
	data.Inputs, data.Raw = len(report.Inputs), space == separate.Raw
	if err := export.WriteCheckReport(stdout, format, &export.CheckReport{Data: data, Report: report}); err != nil {
		return err
	}
	if opts.require == "" {
		return nil
	}
	var failed []string
	for _, s := range report.Splits {
		if s.Verdict != separate.Separable {
			failed = append(failed, fmt.Sprintf("%s against %s (%s)", s.Positive, s.Negative, s.Verdict))
		}
	}
	if len(failed) > 0 {
		return exitCodeError{code: exitNotSeparable, msg: "--require separable: " + strings.Join(failed, ", ")}
	}
	return nil
}
