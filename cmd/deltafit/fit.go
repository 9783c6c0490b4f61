package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// learnFlags are the encoding and training flags of fit (and check).
type learnFlags struct {
	target      string
	ignore      []string
	numeric     string
	categorical string
	rule        string
	unit        string
	epochs      int
	rate        string
	seed        uint64
}

func (f *learnFlags) add(cmd *cobra.Command) {
	fs := cmd.Flags()
	fs.StringVar(&f.target, "target", "", "name of the column holding the class (required)")
	fs.StringSliceVar(&f.ignore, "ignore", nil, "columns to leave out, such as ids (comma-separated)")
	fs.StringVar(&f.numeric, "numeric", "auto", "numeric encoding: auto[:K] (chosen on the training rows among zscore, thermometer:K and hybrid:K), thermometer[:K], onehot[:K], threshold[:V], zscore, minmax or hybrid[:K]")
	fs.StringVar(&f.categorical, "categorical", "onehot:1", "categorical encoding: onehot[:MIN], values seen fewer than MIN times share the other unit")
	fs.StringVar(&f.rule, "rule", "delta", "learning rule: delta, or hebbian (one pass, linear outputs: --epochs and --unit do not apply)")
	fs.StringVar(&f.unit, "unit", "logistic", "output unit: logistic or linear")
	fs.IntVar(&f.epochs, "epochs", fit.DefaultEpochs, "most passes over the training rows")
	fs.StringVar(&f.rate, "rate", "auto", `learning rate: a positive number, or "auto" to derive it from the inputs`)
	fs.Uint64Var(&f.seed, "seed", 1, "seed for the order of updates and the folds")
}

// learner turns the flags into a Learner, checking every value.
func (f *learnFlags) learner() (evaluate.Learner, error) {
	var l evaluate.Learner
	var err error
	if f.target == "" {
		return l, usagef("--target is required: name the column that holds the class")
	}
	for _, col := range f.ignore {
		if col == "" {
			return l, usagef("--ignore %q: a column name is empty; separate names with single commas", strings.Join(f.ignore, ","))
		}
	}
	if l.Plan.Numeric, err = encode.ParseNumericEncoding(f.numeric); err != nil {
		return l, usagef("--numeric: %v", err)
	}
	if l.Plan.Categorical, err = encode.ParseCategoricalEncoding(f.categorical); err != nil {
		return l, usagef("--categorical: %v", err)
	}
	if l.Fit.Rule, err = fit.RuleByName(f.rule); err != nil {
		return l, usagef("--rule: %v", err)
	}
	if l.Fit.Unit, err = fit.ParseUnit(f.unit); err != nil {
		return l, usagef("--unit: %v", err)
	}
	if f.epochs < 1 {
		return l, usagef("--epochs %d: give at least 1", f.epochs)
	}
	l.Fit.Epochs = f.epochs
	if f.rate != "auto" {
		rate, err := strconv.ParseFloat(f.rate, 64)
		if err != nil || !(rate > 0) || rate > maxRate {
			return l, usagef(`--rate %q: give a positive number up to 1e6, or "auto"`, f.rate)
		}
		l.Fit.Rate = rate
	}
	l.Fit.Seed = f.seed
	return l, nil
}

func (f *learnFlags) modelOptions(kinds []string) export.Options {
	o := export.Options{
		Rule: f.rule, Unit: f.unit, Epochs: f.epochs, Rate: f.rate,
		Numeric: f.numeric, Categorical: f.categorical, Seed: f.seed,
		Ignore: slices.Clone(f.ignore), Kinds: map[string]string{},
	}
	if o.Ignore == nil {
		o.Ignore = []string{}
	}
	for _, kv := range kinds {
		col, kind, _ := strings.Cut(kv, "=")
		o.Kinds[col] = kind
	}
	return o
}

type fitOptions struct {
	input   inputFlags
	missing missingPolicy
	learn   learnFlags
	output  string
	folds   int
	repeats int
	format  string
}

func newFitCmd() *cobra.Command {
	var opts fitOptions
	cmd := &cobra.Command{
		Use:   "fit DATA --target COLUMN [flags]",
		Short: "Fit a model on all rows; with --folds, cross-validate it against baselines",
		Long: `Fit encodes every feature column on all rows of DATA (a path, or - for stdin),
trains the output units with the chosen rule and prints a training summary.
With -o it writes the model file (atomically). With --folds K it also runs
stratified K-fold cross-validation, fitting the encoding and the weights on
each training fold only, and reports the pooled out-of-fold confusion table
beside the majority-class and Hebbian baselines.
` + exitStatusHelp,
		Example: `  deltafit fit testdata/iris.csv --target species --folds 10 --seed 1
  cat runs.csv | deltafit fit - --target outcome --ignore run_id -o model.json --format json`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runFit(cmd.Context(), opts, args[0], cmd.InOrStdin(), cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	opts.input.add(cmd.Flags())
	opts.missing.add(cmd.Flags())
	opts.learn.add(cmd)
	cmd.Flags().StringVarP(&opts.output, "output", "o", "", "write the model file here; - writes it to stdout, and the report to stderr (none with --quiet)")
	cmd.Flags().IntVar(&opts.folds, "folds", 0, "cross-validate with this many stratified folds (0: no cross-validation)")
	cmd.Flags().IntVar(&opts.repeats, "repeats", 1, "repeat the cross-validation this many times, each with its own folds (needs --folds)")
	cmd.Flags().StringVar(&opts.format, "format", "text", "report format: text, json or markdown")
	return cmd
}

func runFit(ctx context.Context, opts fitOptions, path string, stdin io.Reader, stdout, stderr io.Writer) error {
	format, err := reportFormat(opts.format)
	if err != nil {
		return err
	}
	report := stdout
	if opts.output == "-" {
		report = stderr // stdout carries the model
	}
	if err := checkOutput(opts.output, path); err != nil {
		return err
	}
	if opts.folds == 1 || opts.folds < 0 {
		return usagef("--folds %d: give 0 for no cross-validation, or at least 2", opts.folds)
	}
	if opts.repeats < 1 || (opts.repeats > 1 && opts.folds == 0) {
		return usagef("--repeats %d: give at least 1, and more than 1 only with --folds", opts.repeats)
	}
	learner, d, sha, err := loadDataset(opts.input, opts.learn, opts.missing, path, stdin, stderr)
	if err != nil {
		return err
	}
	studyOpts := evaluate.StudyOptions{Folds: opts.folds, Repeats: opts.repeats, Seed: opts.learn.seed}
	progress := newFitProgress(stderr)
	if progress != nil {
		learner.Fit.Recorder, studyOpts.Progress = progress.recorder(learner.Fit.Recorder), progress.fold
	}
	study, err := evaluate.RunStudy(ctx, d, learner, studyOpts)
	progress.finish()
	if err != nil {
		return divergenceHint(err, opts.learn)
	}
	for _, c := range study.SmallClasses {
		fmt.Fprintf(stderr, "deltafit: warning: %s: %s\n", tabular.DisplayName(path), c)
	}
	if study.Fitted.Classifier.Plan.Width() == 0 {
		fmt.Fprintf(stderr, "deltafit: warning: %s: no input units (the features are ignored, constant or empty): the model gives every row the same class\n", tabular.DisplayName(path))
	}
	modelPath := opts.output
	if opts.output != "" {
		model := export.NewModel(study.Fitted,
			opts.learn.modelOptions(opts.input.kinds), export.DataInfo{Rows: d.Table.Rows, SHA256: sha})
		write := func(w io.Writer) error { return export.WriteModel(w, model) }
		if opts.output == "-" {
			modelPath = "stdout"
			err = write(stdout)
		} else {
			err = export.WriteFile(opts.output, write)
		}
		if err != nil {
			return err
		}
	}
	return export.WriteFitReport(report, format, export.NewFitReport(study, d, sha, opts.learn.seed, modelPath))
}

// loadDataset checks the encoding and training flags, then reads the data
// and picks its target, returning the sha256 of the bytes read.
func loadDataset(input inputFlags, learn learnFlags, missing missingPolicy, path string, stdin io.Reader, stderr io.Writer) (evaluate.Learner, *tabular.Dataset, string, error) {
	learner, err := learn.learner()
	if err != nil {
		return learner, nil, "", err
	}
	if err := missing.check(); err != nil {
		return learner, nil, "", err
	}
	readOpts, err := input.readOptions()
	if err != nil {
		return learner, nil, "", err
	}
	table, sha, err := readTable(path, stdin, stderr, readOpts)
	if err != nil {
		return learner, nil, "", err
	}
	if table.Column(learn.target) != nil {
		table = missing.apply(table, learn.target, learn.ignore, stderr)
	}
	d, err := tabular.NewDataset(table, learn.target, learn.ignore)
	return learner, d, sha, err
}

// maxRate is the largest --rate accepted (1e6 in the usage message).
const maxRate = 1e6

// divergenceHint adds what to try to a divergence error. The Hebbian rule
// makes one pass, so its weights are the rate times the summed updates.
func divergenceHint(err error, learn learnFlags) error {
	switch {
	case !errors.Is(err, fit.ErrDiverged):
		return err
	case learn.rule == "hebbian" && learn.rate != "auto":
		return fmt.Errorf("%w; the Hebbian weights are the rate times the summed updates: try --rate auto (1/rows)", err)
	case learn.rate == "auto":
		return fmt.Errorf("%w; try a smaller --rate", err)
	}
	return fmt.Errorf("%w; try --rate auto, or a smaller --rate", err)
}
