package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/io/filesystem"
	beamlog "github.com/apache/beam/sdks/v2/go/pkg/beam/log"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"deltafit/cmd/deltafit-beam/pipeline"
	"deltafit/export"
	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// fitOptions are the flags of fit and cv: deltafit fit's data, encoding
// and rule flags, the pipeline's own, and Beam's pipeline options.
type fitOptions struct {
	// deltafit fit's flags.
	target      string
	ignore      []string
	numeric     string
	categorical string
	rule        string
	unit        string
	epochs      int
	rate        string
	seed        uint64
	delimiter   string
	format      string
	kinds       []string
	na          []string
	missing     string
	output      string
	folds       int
	report      string

	// The pipeline's.
	mode      string
	blockRows int
	work      string
	runner    string
	logLevel  string
	sketch    int

	tolerance         float64
	stopWhenSeparated bool
	l2, decay         float64
}

// beamFlags are Beam's pipeline options offered by fit and cv, passed
// through to Beam as they are.
var beamFlags = []string{"endpoint", "environment_type", "environment_config", "job_name", "parallelism", "worker_binary", "experiments"}

func newFitCmd(cv bool) *cobra.Command {
	var opts fitOptions
	cmd := &cobra.Command{
		Use:   "fit DATA... --target COLUMN [flags]",
		Short: "Fit a model on all rows as a pipeline; with --folds, cross-validate it",
		Long: `fit reads DATA (files or glob patterns; CSV, Arrow IPC or Parquet), fits the
encoding plan and trains the output units as a Beam pipeline, and prints
deltafit fit's report. -o writes the model file, which deltafit predict,
evaluate and export take. --mode batch (default) equals deltafit fit --batch
epoch by epoch; --mode averaged trains each block of rows online and averages
the weights by row count. With --folds K it also cross-validates on folds
dealt by a hash of each row's file and number, stratified by class.
` + exitStatusHelp,
		Example: `  deltafit-beam fit testdata/iris.csv --target species --mode batch --epochs 50 -o m.json
  deltafit-beam fit '/data/runs/part-*.parquet' --target outcome --runner flink --endpoint localhost:8099 --work /shared/tmp`,
		Args: cobra.MinimumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if opts.rule == "hebbian" && !cmd.Flags().Changed("l2") {
				opts.l2 = 0 // the default weight decay is the delta rule's
			}
			return runFit(cmd.Context(), opts, cv, args, cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	if cv {
		cmd.Use = "cv DATA... --target COLUMN [flags]"
		cmd.Short = "Cross-validate as a pipeline, beside the majority-class and Hebbian baselines"
		cmd.Long = `cv cross-validates with --folds K (default 10) stratified folds dealt by a
hash of each row's file and number, fitting the encoding and the weights on
each training fold only, and prints deltafit fit's report with its cv
section (the same JSON keys). All folds train side by side in the same
passes over the data.
` + exitStatusHelp
		cmd.Example = `  deltafit-beam cv testdata/iris.csv --target species --format json`
	}
	fs := cmd.Flags()
	fs.StringVar(&opts.target, "target", "", "name of the column holding the class (required)")
	fs.StringSliceVar(&opts.ignore, "ignore", nil, "columns to leave out, such as ids (comma-separated)")
	fs.StringVar(&opts.numeric, "numeric", "hybrid:8", "numeric encoding: hybrid[:K] (a linear unit and thermometer units), thermometer[:K], onehot[:K], threshold[:V], zscore or minmax; auto is deltafit fit's only")
	fs.StringVar(&opts.categorical, "categorical", "onehot:1", "categorical encoding: onehot[:MIN], values seen fewer than MIN times share the other unit")
	fs.StringVar(&opts.rule, "rule", "delta", "learning rule: delta, or hebbian (one pass, linear outputs)")
	fs.StringVar(&opts.unit, "unit", "logistic", "output unit: logistic or linear")
	fs.IntVar(&opts.epochs, "epochs", fit.DefaultEpochs, "most passes over the training rows")
	fs.Float64Var(&opts.tolerance, "tolerance", fit.DefaultTolerance, "stop once the best loss has fallen by at most this fraction of itself over the last 10 epochs")
	fs.BoolVar(&opts.stopWhenSeparated, "stop-when-separated", false, "stop at the first epoch with no training errors; by default training goes on, as deltafit fit's")
	fs.Float64Var(&opts.l2, "l2", fit.DefaultL2, "weight decay λ: every update first shrinks the weights (not the biases) by 1 − rate·λ; 0 for none, as deltafit fit's")
	fs.Float64Var(&opts.decay, "decay", 0, "lower the rate epoch by epoch: epoch e trains at rate/(1 + decay·(e−1))")
	fs.StringVar(&opts.rate, "rate", "auto", `learning rate: a positive number, or "auto" to derive it from the inputs`)
	fs.Uint64Var(&opts.seed, "seed", 1, "seed of the folds and of the averaged mode's row orders")
	fs.StringVar(&opts.delimiter, "delimiter", ",", `CSV field delimiter: one character, or "tab"`)
	fs.StringVar(&opts.format, "input-format", "auto", "input format: auto, csv, arrow or parquet")
	fs.StringArrayVar(&opts.kinds, "kind", nil, "declare a column's kind, as COLUMN=numeric|categorical|boolean (repeatable)")
	fs.StringSliceVar(&opts.na, "na", nil, "cell texts that mean missing in CSV, besides the empty cell and NA (comma-separated)")
	fs.StringVar(&opts.missing, "missing", "indicator", `rows with missing cells: "indicator" keeps them; "drop" leaves them out`)
	fs.StringVar(&opts.report, "format", "text", "report format: text, json or markdown")
	folds := 0
	if cv {
		folds = 10
	} else {
		fs.StringVarP(&opts.output, "output", "o", "", "write the model file here")
	}
	fs.IntVar(&opts.folds, "folds", folds, "cross-validate with this many stratified folds (0: none)")
	fs.StringVar(&opts.mode, "mode", pipeline.ModeBatch, "training: batch (full-batch gradient descent, as deltafit fit --batch) or averaged (online per block, weights averaged by row count)")
	fs.IntVar(&opts.sketch, "quantile-sketch", encode.DefaultSketchCapacity, "values a level of a numeric column's quantile sketch keeps: cuts are exact up to this many present values a column, then within the rank error the report states; 0 keeps every value (exact, 8 bytes a cell in memory)")
	fs.IntVar(&opts.blockRows, "block-rows", pipeline.DefaultBlockRows, "rows per block, the unit of work and of every partial sum")
	fs.StringVar(&opts.work, "work", "", "directory for the run's result, readable by this program and writable by the workers (default: a temporary directory, with the prism runner only)")
	fs.StringVar(&opts.runner, "runner", "prism", "Beam runner: prism (in-process), flink, spark or universal (a portable job endpoint)")
	fs.StringVar(&opts.logLevel, "log", "warn", "the Beam runner's log on stderr: info, warn or error")
	for _, name := range beamFlags {
		if f := flag.CommandLine.Lookup(name); f != nil {
			fs.AddFlag(pflag.PFlagFromGoFlag(f))
		}
	}
	return cmd
}

func runFit(ctx context.Context, opts fitOptions, cv bool, args []string, stdout, stderr io.Writer) error {
	format, err := export.ParseFormat(opts.report)
	if err != nil {
		return usagef("--format %q: give text, json or markdown", opts.report)
	}
	c, err := opts.config()
	if err != nil {
		return err
	}
	if cv && c.Folds == 0 {
		return usagef("--folds 0: cv needs at least 2 folds")
	}
	if c.Paths, c.Keys, err = matchFiles(ctx, args); err != nil {
		return err
	}
	if opts.output != "" && slices.Contains(c.Paths, opts.output) {
		return usagef("-o %s is also an input of this command; writing it would replace the input", opts.output)
	}
	if c.Work == "" {
		if opts.runner != "prism" {
			return usagef("--work: give a directory the %s runner's workers can write and this program can read", opts.runner)
		}
		dir, err := os.MkdirTemp("", "deltafit-beam-")
		if err != nil {
			return err
		}
		defer os.RemoveAll(dir)
		c.Work = dir
	}
	if !slices.Contains([]string{"info", "warn", "error"}, opts.logLevel) {
		return usagef("--log %q: give info, warn or error", opts.logLevel)
	}
	beamlog.LogLevel = opts.logLevel // read by beam.Init
	beam.Init()
	s, err := pipeline.Run(ctx, c, opts.runner)
	if err != nil {
		return err
	}
	for _, w := range s.Warnings {
		fmt.Fprintf(stderr, "deltafit-beam: warning: %s\n", w)
	}
	modelOpts := opts.modelOptions()
	if opts.output != "" {
		m := s.Model(modelOpts)
		if err := export.WriteFile(opts.output, func(w io.Writer) error { return export.WriteModel(w, m) }); err != nil {
			return err
		}
	}
	source := args[0]
	if len(args) > 1 {
		source = strings.Join(args, " ")
	}
	return export.WriteFitReport(stdout, format, s.Report(source, modelOpts, opts.output))
}

// config turns the flags into a pipeline configuration, checking each.
func (o fitOptions) config() (*pipeline.Config, error) {
	if o.target == "" {
		return nil, usagef("--target is required: name the column that holds the class")
	}
	for _, col := range o.ignore {
		if col == "" {
			return nil, usagef("--ignore %q: a column name is empty; separate names with single commas", strings.Join(o.ignore, ","))
		}
	}
	if o.epochs < 1 {
		return nil, usagef("--epochs %d: give at least 1", o.epochs)
	}
	if o.folds == 1 || o.folds < 0 {
		return nil, usagef("--folds %d: give 0 for no cross-validation, or at least 2", o.folds)
	}
	if o.missing != "indicator" && o.missing != "drop" {
		return nil, usagef(`--missing %q: give "indicator" or "drop"`, o.missing)
	}
	if !(o.l2 >= 0) || math.IsInf(o.l2, 0) {
		return nil, usagef("--l2 %v: give 0 or a positive number", o.l2)
	}
	if !(o.decay >= 0) || math.IsInf(o.decay, 0) {
		return nil, usagef("--decay %v: give 0 or a positive number", o.decay)
	}
	if o.rule == "hebbian" && (o.l2 != 0 || o.decay != 0) {
		return nil, usagef("--l2 and --decay apply to the delta rule; --rule hebbian makes one pass")
	}
	if !(o.tolerance >= 0) {
		return nil, usagef("--tolerance %v: give 0 or a positive fraction", o.tolerance)
	}
	if o.sketch < 0 || o.sketch == 1 {
		return nil, usagef("--quantile-sketch %d: give 0 (every value) or at least 2", o.sketch)
	}
	if o.blockRows < 1 {
		return nil, usagef("--block-rows %d: give at least 1", o.blockRows)
	}
	c := &pipeline.Config{
		Format: o.format, Missing: o.na, Target: o.target, Ignore: o.ignore,
		DropMissing: o.missing == "drop", Numeric: o.numeric, Categorical: o.categorical,
		Rule: o.rule, Unit: o.unit, Epochs: o.epochs, Seed: o.seed, Mode: o.mode,
		Folds: o.folds, BlockRows: o.blockRows, Work: o.work,
		Tolerance: o.tolerance, KeepGoing: !o.stopWhenSeparated, SketchCapacity: o.sketch,
		L2: o.l2, Decay: o.decay,
	}
	switch d := o.delimiter; {
	case d == "tab" || d == `\t`:
		c.Delimiter = "\t"
	case len([]rune(d)) == 1 && d != "\n" && d != "\r" && d != `"`:
		c.Delimiter = d
	default:
		return nil, usagef("--delimiter %q: give one character (not a quote or line break), or \"tab\"", d)
	}
	if o.rate != "auto" {
		rate, err := strconv.ParseFloat(o.rate, 64)
		if err != nil || !(rate > 0) || rate > 1e6 {
			return nil, usagef(`--rate %q: give a positive number up to 1e6, or "auto"`, o.rate)
		}
		c.Rate = rate
	}
	for _, kv := range o.kinds {
		col, kind, ok := strings.Cut(kv, "=")
		if !ok || col == "" {
			return nil, usagef("--kind %q: write COLUMN=numeric, COLUMN=categorical or COLUMN=boolean", kv)
		}
		if _, err := tabular.ParseKind(kind); err != nil {
			return nil, usagef("--kind %q: %v", kv, err)
		}
		if c.Kinds == nil {
			c.Kinds = map[string]string{}
		}
		if _, twice := c.Kinds[col]; twice {
			return nil, usagef("--kind: column %q is given a kind twice; give one", col)
		}
		c.Kinds[col] = kind
	}
	if err := c.Check(); err != nil && !errors.Is(err, pipeline.ErrNoFiles) && !errors.Is(err, pipeline.ErrNoWork) {
		return nil, usageError{err}
	}
	return c, nil
}

// modelOptions are the options the model file records, as given.
func (o fitOptions) modelOptions() export.Options {
	m := export.Options{
		Rule: o.rule, Unit: o.unit, Epochs: o.epochs, Rate: o.rate,
		Numeric: o.numeric, Categorical: o.categorical, Seed: o.seed,
		Ignore: slices.Clone(o.ignore), Kinds: map[string]string{},
		Decay: o.decay, L2: o.l2, Batch: o.mode == pipeline.ModeBatch,
		Tolerance: o.tolerance, Patience: fit.DefaultPatience, StopWhenSeparated: o.stopWhenSeparated,
	}
	if m.Ignore == nil {
		m.Ignore = []string{}
	}
	for _, kv := range o.kinds {
		col, kind, _ := strings.Cut(kv, "=")
		m.Kinds[col] = kind
	}
	return m
}

// matchFiles expands the paths and glob patterns with Beam's filesystems
// and gives each file its key: its path below the directory where the
// pattern's first wildcard is, so that keys do not depend on where the
// data is mounted.
func matchFiles(ctx context.Context, patterns []string) (paths, keys []string, err error) {
	seen := map[string]string{}
	for _, pattern := range patterns {
		if pattern == "-" {
			return nil, nil, usagef("DATA -: a pipeline reads files, not stdin; give paths or glob patterns")
		}
		fs, err := filesystem.New(ctx, pattern)
		if err != nil {
			return nil, nil, usagef("%s: %v", pattern, err)
		}
		matched, err := fs.List(ctx, pattern)
		fs.Close()
		if err != nil {
			return nil, nil, fmt.Errorf("%s: %w", pattern, err)
		}
		if len(matched) == 0 {
			return nil, nil, fmt.Errorf("%s: no such file", pattern)
		}
		root := patternRoot(pattern)
		slices.Sort(matched)
		for _, path := range matched {
			if info, err := os.Stat(path); err == nil && info.IsDir() {
				continue
			}
			key := strings.TrimPrefix(strings.TrimPrefix(path, root), "/")
			if other, dup := seen[key]; dup && other != path {
				return nil, nil, usagef("%s and %s have the same key %q (their path below the pattern's directory); give patterns with distinct paths below them", other, path, key)
			} else if dup {
				continue
			}
			seen[key] = path
			paths, keys = append(paths, path), append(keys, key)
		}
	}
	if len(paths) == 0 {
		return nil, nil, fmt.Errorf("%s: no files, only directories", strings.Join(patterns, " "))
	}
	return paths, keys, nil
}

// patternRoot is the directory part of a pattern before its first
// wildcard.
func patternRoot(pattern string) string {
	i := strings.IndexAny(pattern, "*?[")
	if i < 0 {
		return filepath.Dir(pattern)
	}
	return pattern[:strings.LastIndex(pattern[:i], "/")+1]
}
