package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
	"sync"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

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
	decay       float64
	l2          float64
	batch       bool
	average     bool
	tolerance   float64
	holdout     float64
	patience    int
	seed        uint64

	stopWhenSeparated bool

	flags *pflag.FlagSet // where they were added, to tell given flags from defaults
}

// onePassFlags are the training flags that a one-pass rule (hebbian)
// ignores: giving one with it is a usage error.
var onePassFlags = []string{"unit", "epochs", "decay", "l2", "batch", "average", "tolerance", "holdout", "patience", "stop-when-separated"}

// trainingFlags are the flags that only training reads.
var trainingFlags = append([]string{"rule", "rate"}, onePassFlags...)

func (f *learnFlags) add(cmd *cobra.Command) {
	fs := cmd.Flags()
	f.flags = fs
	fs.StringVar(&f.target, "target", "", "name of the column holding the class (required)")
	fs.StringSliceVar(&f.ignore, "ignore", nil, "columns to leave out, such as ids (comma-separated)")
	fs.StringVar(&f.numeric, "numeric", "auto", "numeric encoding: auto[:K] (chosen on the training rows among zscore, thermometer:K and hybrid:K), thermometer[:K], onehot[:K], threshold[:V], zscore, minmax or hybrid[:K]")
	fs.StringVar(&f.categorical, "categorical", "onehot:1", "categorical encoding: onehot[:MIN], values seen fewer than MIN times share the other unit")
	fs.StringVar(&f.rule, "rule", "delta", "learning rule: delta, or hebbian (one pass, linear outputs: the flags from --unit to --patience do not apply)")
	fs.StringVar(&f.unit, "unit", "logistic", "output unit: logistic or linear")
	fs.IntVar(&f.epochs, "epochs", fit.DefaultEpochs, "most passes over the training rows")
	fs.StringVar(&f.rate, "rate", "auto", `learning rate: a positive number, or "auto": online 1/(max‖x̃‖² + l2), half the bound under which every row's update is stable; --batch 1/(λmax + l2)`)
	fs.Float64Var(&f.decay, "decay", 0, "lower the rate epoch by epoch: epoch e trains at rate/(1 + decay·(e−1)); 0 keeps it constant")
	fs.Float64Var(&f.l2, "l2", fit.DefaultL2, "weight decay λ: each update first shrinks the weights (not the biases) by 1 − rate·λ; 0 for none")
	fs.BoolVar(&f.batch, "batch", false, "one update per epoch, the mean of the rows' updates (full-batch gradient descent), instead of one per row")
	fs.BoolVar(&f.average, "average", true, "online: keep the average of the weights over the last half to three quarters of the epochs; --average=false keeps the last weights")
	fs.Float64Var(&f.tolerance, "tolerance", fit.DefaultTolerance, "stop once the best loss has fallen by at most this fraction of itself over --patience epochs")
	fs.Float64Var(&f.holdout, "holdout", 0, "hold out this fraction of each class, stop on its loss (early stopping) and keep the weights of its best epoch; 0: train on every row")
	fs.IntVar(&f.patience, "patience", fit.DefaultPatience, "epochs the stop rule looks back over (on the held-out loss with --holdout)")
	fs.BoolVar(&f.stopWhenSeparated, "stop-when-separated", false, "stop at the first epoch with no training errors; by default training goes on, which widens the margin of logistic units")
	fs.Uint64Var(&f.seed, "seed", 1, "seed for the order of updates, the held-out rows and the folds")
}

// isOnePass reports whether rule makes one pass (fit.OnePass), ignoring
// the flags of onePassFlags.
func isOnePass(rule fit.Rule) bool {
	op, ok := rule.(fit.OnePass)
	return ok && op.OnePass()
}

// given reports whether the flag name was set on the command line.
func (f *learnFlags) given(name string) bool {
	return f.flags != nil && f.flags.Changed(name)
}

// appliedL2 is the weight decay training applies: none for a one-pass
// rule, which ignores the default.
func (f *learnFlags) appliedL2() float64 {
	if rule, err := fit.RuleByName(f.rule); err == nil && isOnePass(rule) {
		return 0
	}
	return f.l2
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
	switch {
	case !(f.decay >= 0 && f.decay <= maxRate):
		return l, usagef("--decay %v: give a number from 0 (constant rate) to 1e6", f.decay)
	case !(f.l2 >= 0 && f.l2 <= maxRate):
		return l, usagef("--l2 %v: give a number from 0 (no weight decay) to 1e6", f.l2)
	case !(f.tolerance > 0 && f.tolerance < 1):
		return l, usagef("--tolerance %v: give a fraction above 0 and below 1", f.tolerance)
	case !(f.holdout >= 0 && f.holdout <= 0.5):
		return l, usagef("--holdout %v: give a fraction from 0 (no holdout) to 0.5", f.holdout)
	case f.patience < 1:
		return l, usagef("--patience %d: give at least 1 epoch", f.patience)
	}
	if isOnePass(l.Fit.Rule) {
		for _, name := range onePassFlags {
			if f.given(name) {
				return l, usagef("--%s does not apply to --rule %s, which makes one pass with linear outputs", name, f.rule)
			}
		}
	}
	if f.batch && f.given("average") {
		return l, usagef("--average applies to online training; --batch weights are not averaged")
	}
	l.Fit.Decay, l.Fit.L2, l.Fit.Batch, l.Fit.LastIterate = f.decay, f.appliedL2(), f.batch, !f.average
	l.Fit.Tolerance, l.Fit.Holdout, l.Fit.Patience = f.tolerance, f.holdout, f.patience
	// Training goes on past zero errors unless asked: on separable rows,
	// descent on the logistic loss keeps turning the weights toward the
	// widest margin (Soudry et al. 2018, from memory), where stopping at the
	// first separating epoch keeps a margin close to zero.
	l.Fit.KeepGoing = !f.stopWhenSeparated
	l.Fit.Seed = f.seed
	return l, nil
}

// modelOptions are the options as the model file records them, for flags
// that learner accepted.
func (f *learnFlags) modelOptions(kinds []string) export.Options {
	rule, _ := fit.RuleByName(f.rule)
	o := export.Options{
		Rule: f.rule, Unit: f.unit, Epochs: f.epochs, Rate: f.rate,
		Decay: f.decay, L2: f.appliedL2(), Batch: f.batch, Average: f.average && !f.batch && !isOnePass(rule), StopWhenSeparated: f.stopWhenSeparated,
		Tolerance: f.tolerance, Holdout: f.holdout, Patience: f.patience,
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
	outputs reportOutputs
	oof     string
	stream  streamFlags
	// csvTextAsIs writes the text cells of a CSV --oof file unguarded.
	csvTextAsIs bool
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

With --stream, or when DATA is a file whose in-memory fit would need more
than --memory, fit never holds more than a batch of DATA: it reads DATA
once to fit the plan from bounded summaries (quantile cuts from a sketch,
exact while a column's values fit it, else within the rank error the plan
records as quantile_rank_error), again to encode every row into a pattern
store on disk (removed afterwards unless kept with --cache), and trains
from the store block by block, each epoch block-shuffled (--block). It
does not yet cross-validate (--folds), hold out rows (--holdout), choose
the encoding (--numeric auto) or read stdin.
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
	opts.outputs.add(cmd.Flags())
	cmd.Flags().StringVar(&opts.oof, "oof", "", "with --folds: write each row's out-of-fold prediction (fold, true and predicted class, scores) to this file: .csv, .jsonl, .arrow or .parquet")
	opts.stream.add(cmd.Flags())
	addCSVTextAsIs(cmd.Flags(), &opts.csvTextAsIs)
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
	if err := opts.outputs.check(path); err != nil {
		return err
	}
	if _, err := oofFormat(opts.oof, opts.folds, path); err != nil {
		return err
	}
	if opts.stream.block < 0 {
		return usagef("--block %d: give a number of rows, or 0 for one full shuffle", opts.stream.block)
	}
	if err := checkOutputPath("--cache", opts.stream.cache, path); err != nil {
		return err
	}
	stream, note, err := opts.stream.streaming(path)
	if err != nil {
		return err
	}
	if stream {
		if err := checkStream(&opts, path, opts.learn.given, stderr); err != nil {
			return err
		}
		fmt.Fprint(stderr, note)
		return runFitStream(ctx, opts, path, stdout, stderr, format)
	}
	if opts.stream.cache != "" {
		return usagef("--cache keeps the pattern store of --stream; give --stream too")
	}
	learner, d, sha, err := loadDataset(opts.input, opts.learn, &opts.missing, path, stdin, stderr)
	if err != nil {
		return err
	}
	learner.Fit.Warn = warnOnce(stderr)
	learner.Fit.Block = opts.stream.block
	positive, err := opts.outputs.positiveClass(d.Labels)
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
	modelOpts := opts.learn.modelOptions(opts.input.kinds)
	modelOpts.Block = opts.stream.block
	modelPath, err := writeModelFile(opts.output, stdout, export.NewModel(study.Fitted, modelOpts, export.DataInfo{Rows: d.Table.Rows, SHA256: sha}))
	if err != nil {
		return err
	}
	fitReport := export.NewFitReport(study, d, sha, opts.learn.seed, modelPath)
	if err := studyFigures(fitReport, study, d, learner.Fit, opts, path, sha, positive); err != nil {
		return err
	}
	if err := writeStudyOutputs(fitReport, study, d, opts); err != nil {
		return err
	}
	return export.WriteFitReport(report, format, fitReport)
}

// loadDataset checks the encoding and training flags, then reads the data
// and picks its target, returning the sha256 of the bytes read.
func loadDataset(input inputFlags, learn learnFlags, missing *missingPolicy, path string, stdin io.Reader, stderr io.Writer) (evaluate.Learner, *tabular.Dataset, string, error) {
	learner, err := learn.learner()
	if err != nil {
		return learner, nil, "", err
	}
	if missing != nil {
		if err := missing.check(); err != nil {
			return learner, nil, "", err
		}
	}
	readOpts, err := input.readOptions()
	if err != nil {
		return learner, nil, "", err
	}
	readOpts.Target = learn.target
	table, sha, err := readTable(path, stdin, stderr, readOpts)
	if err != nil {
		return learner, nil, "", err
	}
	if missing != nil && table.Column(learn.target) != nil {
		table = missing.apply(table, learn.target, learn.ignore, stderr)
	}
	d, err := tabular.NewDataset(table, learn.target, learn.ignore)
	if err != nil {
		return learner, nil, "", err
	}
	for _, same := range d.SameNumber {
		fmt.Fprintf(stderr, "deltafit: warning: %s: column %s: the labels %s are different classes though they are the same number; declare the column numeric (--kind %s=numeric) to make them one class\n",
			tabular.DisplayName(path), learn.target, quoteJoin(same), learn.target)
	}
	return learner, d, sha, nil
}

// warnOnce returns a fit.Options.Warn that prints the first warning it
// hears on stderr and drops the rest: the fit on all rows warns first,
// and the folds of a cross-validation, which train on fewer rows of the
// same data, would repeat it. It is safe for concurrent use.
func warnOnce(stderr io.Writer) func(string) {
	var once sync.Once
	return func(message string) {
		once.Do(func() { fmt.Fprintf(stderr, "deltafit: warning: %s\n", message) })
	}
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

// quoteJoin quotes each label and joins them with "and".
func quoteJoin(labels []string) string {
	quoted := make([]string, len(labels))
	for i, l := range labels {
		quoted[i] = strconv.Quote(l)
	}
	return strings.Join(quoted, " and ")
}

// writeModelFile writes m to path, atomically, or to stdout when path is
// "-", and returns the name the report gives it: path, "stdout", or ""
// when path is "" and nothing is written.
func writeModelFile(path string, stdout io.Writer, m *export.Model) (string, error) {
	write := func(w io.Writer) error { return export.WriteModel(w, m) }
	switch path {
	case "":
		return "", nil
	case "-":
		return "stdout", write(stdout)
	}
	return path, export.WriteFile(path, write)
}
