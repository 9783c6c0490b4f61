package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"deltafit/evaluate/separate"
	"deltafit/export"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// check's exit codes when --require separable fails.
const (
	exitNotSeparable = 3 // a split is proven not separable
	exitUndecided    = 4 // none is proven not separable, but one is undecided
)

type checkOptions struct {
	input    inputFlags
	learn    learnFlags // the target, --ignore, the encodings and the seed
	space    string
	pairs    bool
	split    string
	positive string
	missing  string
	budget   int
	timeout  time.Duration
	require  string
	format   string
	// progress prints a line per split on stderr (set when stderr is a
	// terminal).
	progress bool
}

func newCheckCmd() *cobra.Command {
	var opts checkOptions
	cmd := &cobra.Command{
		Use:   "check DATA --target COLUMN [flags]",
		Short: "Certify whether each class is linearly separable, with rows that prove it",
		Long: `Check decides, for each class against the rest (and with --pairs each pair of
classes; with --split one split), whether a hyperplane can split the rows of
DATA (a path, or - for stdin) without error, in the encoded input units
(default) or in the numeric columns standardized (--space raw).

Not separable: it prints a certificate, rows from each side with
non-negative weights summing to 1 per side whose weighted means coincide, so
the convex hulls of the sides meet and no single layer can separate them.
The certificate is reduced to a minimal support (at most the inputs plus 2
rows) and printed with each row's values and the common point of the hulls.
Separable: it prints a witness hyperplane (weights, bias) with its margin,
the Euclidean distance of the nearest row; in the raw space also in the
columns' own units, with the means and standard deviations.
Both are checked row by row on the data before they are printed; one that
fails the check is reported as "undecided (numerical)" with the reason.

The solver's work is counted in simplex pivots: each split may spend
--budget pivots (default ` + strconv.Itoa(separate.DefaultBudget) + `), so the same data gives the same
report on any machine. A split that runs out is "undecided (budget)", with
what was learned so far; --timeout adds a wall-clock limit ("undecided
(timeout)"), which makes the result depend on the machine. More than
` + strconv.Itoa(separate.MaxInputs) + ` inputs varying on a split's rows are "undecided (too many inputs)".

It also reports conflicting rows (identical inputs, different classes) with
the error floor they impose on any classifier, and a profile of the data:
class counts and imbalance, constant columns, missing cells, categorical
cardinalities, single columns that alone split a class from the rest, and
duplicate rows (same features and class), which cross-validation may put on
both sides of a fold. On a terminal, a line per split goes to stderr.
` + exitStatusHelp + `
With --require separable: 3 when a split is proven not separable; 4 when
none is, but a split is undecided (budget, timeout, numerical or too many
inputs), so a pipeline never passes on an unproven split.`,
		Example: `  deltafit check testdata/iris.csv --target species --space raw --pairs
  deltafit check testdata/iris.csv --target species --split versicolor,virginica
  deltafit check testdata/xor.csv --target y --require separable || echo "not proven separable"
  deltafit check runs.csv --target outcome --ignore run_id --format json | jq '.splits[].separable'`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.progress = isTerminal(cmd.ErrOrStderr())
			return runCheck(cmd.Context(), opts, args[0], cmd.InOrStdin(), cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	opts.input.add(cmd.Flags())
	opts.learn.add(cmd)
	cmd.Flags().Lookup("seed").Usage = "seed of the error-correction passes and of the solver's perturbation"
	for _, name := range trainingFlags {
		_ = cmd.Flags().MarkHidden(name) // training flags: check trains nothing
	}
	fs := cmd.Flags()
	fs.StringVar(&opts.space, "space", string(separate.Encoded), "where to compare rows: encoded (input units) or raw (numeric columns, standardized)")
	fs.BoolVar(&opts.pairs, "pairs", false, "also check each pair of classes")
	fs.StringVar(&opts.split, "split", "", `check one split only: "A,B" (class A against class B) or "A,rest"`)
	fs.StringVar(&opts.positive, "positive", "", "the class that is the positive side of the splits it is in (default: with two classes the later label, in --pairs the earlier)")
	fs.StringVar(&opts.missing, "missing", string(separate.MissingRefuse), "raw space, rows with a missing cell: refuse (an error) or drop (left out, counted; rows keep their numbers)")
	fs.IntVar(&opts.budget, "budget", separate.DefaultBudget, "simplex pivots each split may spend")
	fs.DurationVar(&opts.timeout, "timeout", 0, "wall-clock limit for the whole check, such as 30s (0: none)")
	fs.StringVar(&opts.require, "require", "", `"separable": exit 3 (or 4) unless every split is proven separable`)
	fs.StringVar(&opts.format, "format", "text", "report format: text, json or markdown")
	return cmd
}

// isTerminal reports whether w is a character device, such as a terminal.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	info, err := f.Stat()
	return err == nil && info.Mode()&os.ModeCharDevice != 0
}

func runCheck(ctx context.Context, opts checkOptions, path string, stdin io.Reader, stdout, stderr io.Writer) error {
	format, err := reportFormat(opts.format)
	if err != nil {
		return err
	}
	space, err := separate.ParseSpace(opts.space)
	if err != nil {
		return usagef("--space: %v", err)
	}
	missing, err := separate.ParseMissing(opts.missing)
	if err != nil {
		return usagef("--missing: %v", err)
	}
	if missing == separate.MissingDrop && space != separate.Raw {
		return usagef("--missing drop is for --space raw; the encoded space gives a column's missing cells their own unit")
	}
	if opts.require != "" && opts.require != "separable" {
		return usagef(`--require %q: the only requirement is "separable"`, opts.require)
	}
	if opts.budget < 1 {
		return usagef("--budget %d: give a positive number of pivots", opts.budget)
	}
	if opts.timeout < 0 {
		return usagef("--timeout %v: give a positive duration, or 0 for none", opts.timeout)
	}
	var split [2]string
	if opts.split != "" {
		a, b, ok := strings.Cut(opts.split, ",")
		if !ok || a == "" || b == "" || strings.Contains(b, ",") {
			return usagef(`--split %q: write "A,B" for class A against class B, or "A,rest"`, opts.split)
		}
		split = [2]string{a, b}
	}
	learner, d, sha, err := loadDataset(opts.input, opts.learn, nil, path, stdin, stderr)
	if err != nil {
		return err
	}
	if err := checkLabels(d, opts.positive, split); err != nil {
		return err
	}
	if learner.Plan.Numeric.Method == encode.Auto {
		// Nothing is trained here to choose on: the encoded space uses
		// thermometer units.
		learner.Plan.Numeric = encode.AutoCandidates(learner.Plan.Numeric)[1]
	}
	if opts.timeout > 0 {
		var cancel context.CancelFunc
		ctx, cancel = context.WithTimeout(ctx, opts.timeout)
		defer cancel()
	}
	checkOpts := separate.CheckOptions{Space: space, Plan: learner.Plan, Pairs: opts.pairs, Split: split, Positive: opts.positive,
		Missing: missing, Seed: opts.learn.seed, Budget: opts.budget}
	if opts.progress {
		checkOpts.Progress = progressPrinter(stderr)
	}
	report, err := separate.Check(ctx, d, checkOpts)
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
	return requireSeparable(report.Splits)
}

// checkLabels turns an unknown class in --positive or --split into a usage
// error listing the classes.
func checkLabels(d *tabular.Dataset, positive string, split [2]string) error {
	known := func(label string) bool {
		for _, l := range d.Labels {
			if l == label {
				return true
			}
		}
		return false
	}
	for _, c := range []struct{ flag, label string }{{"--positive", positive}, {"--split", split[0]}, {"--split", split[1]}} {
		if c.label != "" && c.label != separate.Rest && !known(c.label) {
			return usagef("%s: %q is not a class of %s; the classes are %s", c.flag, c.label, d.Target, strings.Join(d.Labels, ", "))
		}
	}
	if split[0] == separate.Rest {
		return usagef(`--split: "rest" can only be the second side, as in "A,rest"`)
	}
	return nil
}

// requireSeparable is the gate: nil when every split is proven separable.
func requireSeparable(splits []separate.Split) error {
	var failed []string
	code := exitUndecided
	for _, s := range splits {
		if s.Verdict == separate.Separable {
			continue
		}
		if s.Verdict == separate.NotSeparable {
			code = exitNotSeparable
		}
		failed = append(failed, fmt.Sprintf("%s against %s (%s)", s.Positive, s.Negative, s.Verdict))
	}
	if len(failed) == 0 {
		return nil
	}
	return exitCodeError{code: code, msg: "--require separable: " + strings.Join(failed, ", ")}
}

// progressPrinter writes a line on w as each split starts and ends.
func progressPrinter(w io.Writer) func(separate.Progress) {
	var started time.Time
	return func(p separate.Progress) {
		name := fmt.Sprintf("check: split %d of %d, %s against %s", p.Index+1, p.Total, p.Positive, p.Negative)
		if p.Result == nil {
			started = time.Now()
			fmt.Fprintf(w, "%s …\n", name)
			return
		}
		fmt.Fprintf(w, "%s: %s (%d pivots, %.1f s)\n", name, p.Result.Verdict, p.Result.Pivots, time.Since(started).Seconds())
	}
}
