package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"slices"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/spf13/cobra"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

type encodeOptions struct {
	modelInput
	missing  missingPolicy
	learn    learnFlags
	out      tableOutput
	planOnly bool
	changed  func(flag string) bool
}

// planFlags are the flags that say how to fit a plan, which a saved
// model's plan makes moot.
var planFlags = []string{"numeric", "categorical", "ignore", "missing", "rule", "unit", "epochs", "rate", "seed"}

func newEncodeCmd() *cobra.Command {
	var opts encodeOptions
	cmd := &cobra.Command{
		Use:   "encode DATA [--target COLUMN | --model MODEL] [-o FILE] [--format csv|jsonl|arrow|parquet]",
		Short: "Write the rows as the input units deltafit trains on, or print the encoding plan",
		Long: `Encode writes the rows of DATA (a path, or - for stdin) as the input units
deltafit trains on: one column per unit, named after it (petal_length>4.35,
island=north, island=(other), sex:missing, petal_length:zscore), then the
target column when --target is given, so that other tools can use exactly
this encoding. --keep copies input columns (such as an id) first.

Without --model, encode fits the plan on DATA as fit does, with the same
flags (--numeric, --categorical, --ignore, --missing, --kind, --seed) and
writes the rows fit would learn from. The default numeric encoding, auto,
chooses among candidates by training on the target, so it needs --target
(and takes the training flags); give a fixed encoding such as thermometer:8
to encode without a target. DATA is read whole.

With --model, encode uses the model's plan, as predict does, on every row
of DATA, reading one record batch at a time. --target then adds that
column, if DATA has it (missing cells empty).

--plan-only prints the plan instead of the rows: per column its kind,
encoding, what it was fitted to (cuts, center and scale, categories) and
its unit names, as a table (--format text or markdown) or JSON (--format
json). With --model it needs no DATA.

Output goes to stdout, or atomically to the file given with -o. Values are
written in the shortest form that reads back exactly (float64 in arrow and
parquet).
` + exitStatusHelp,
		Example: `  deltafit encode testdata/iris.csv --target species -o iris.units.csv
  deltafit encode new.csv --model model.json --format parquet -o new.units.parquet
  deltafit encode --model model.json --plan-only
  deltafit encode testdata/iris.csv --numeric thermometer:4 --plan-only --format json`,
		Args: cobra.MaximumNArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			opts.changed = cmd.Flags().Changed
			return runEncode(cmd.Context(), opts, args, cmd.InOrStdin(), cmd.OutOrStdout(), cmd.ErrOrStderr())
		},
	}
	fs := cmd.Flags()
	opts.input.add(fs)
	opts.missing.add(fs)
	opts.learn.add(cmd)
	fs.Lookup("target").Usage = "the column holding the class: written last, and needed by --numeric auto"
	fs.StringVar(&opts.model, "model", "", "encode with the plan of this model file (written by fit -o), or - for stdin when DATA is a file")
	fs.BoolVar(&opts.strict, "strict", false, "with --model: refuse cells the model was not trained on instead of warning")
	opts.out.add(fs, "encoded rows")
	fs.Lookup("format").Usage = "output format: csv, jsonl (JSON Lines), arrow (an Arrow IPC stream) or parquet; with --plan-only text, json or markdown"
	fs.BoolVar(&opts.planOnly, "plan-only", false, "print the encoding plan (per column: kind, encoding, cuts or categories, unit names) instead of the rows")
	return cmd
}

func runEncode(ctx context.Context, opts encodeOptions, args []string, stdin io.Reader, stdout, stderr io.Writer) error {
	path := ""
	if len(args) == 1 {
		path = args[0]
	}
	if path == "" && !(opts.planOnly && opts.model != "") {
		return usagef("encode takes one DATA argument, a path or - for stdin (only --model with --plan-only needs none); got 0")
	}
	if opts.model != "" {
		for _, name := range planFlags {
			if opts.changed(name) {
				return usagef("--%s says how to fit a plan; with --model the model's plan is used", name)
			}
		}
	}
	if err := checkOutputPath("-o", opts.out.output, path, opts.model); err != nil {
		return err
	}
	if opts.planOnly {
		return runPlanOnly(ctx, opts, path, stdin, stdout, stderr)
	}
	format, err := opts.out.tableFormat()
	if err != nil {
		return err
	}
	if opts.model != "" {
		return encodeWithModel(opts, format, path, stdin, stdout, stderr)
	}
	fitted, err := fitEncoding(ctx, opts, path, stdin, stderr, opts.out.keep)
	if err != nil {
		return err
	}
	defer fitted.kept.release()
	return opts.out.write(stdout, func(w io.Writer, flush func() error) error {
		return fitted.write(w, flush, format, path, opts.out.tableOptions())
	})
}

// runPlanOnly prints the plan of the model, or the plan fitted on DATA.
func runPlanOnly(ctx context.Context, opts encodeOptions, path string, stdin io.Reader, stdout, stderr io.Writer) error {
	if len(opts.out.keep) > 0 {
		return usagef("--keep names columns of the encoded rows; --plan-only prints the plan")
	}
	if !opts.changed("format") {
		opts.out.format = string(export.Text)
	}
	format, err := export.ParseFormat(opts.out.format)
	if err != nil {
		return usagef("--format %q: with --plan-only give text, json or markdown", opts.out.format)
	}
	var report *export.PlanReport
	if opts.model != "" {
		model, _, err := opts.readModel(path, stdin)
		if err != nil {
			return err
		}
		report = export.NewPlanReport(tabular.DisplayName(opts.model), model.Plan, nil)
	} else {
		fitted, err := fitEncoding(ctx, opts, path, stdin, stderr, nil)
		if err != nil {
			return err
		}
		report = export.NewPlanReport(tabular.DisplayName(path), fitted.plan, fitted.choice)
	}
	write := func(w io.Writer) error { return export.WritePlanReport(w, format, report) }
	if opts.out.toFile() {
		return export.WriteFile(opts.out.output, write)
	}
	return write(stdout)
}

// fittedEncoding is a plan fitted on a table, with the table's rows it
// encodes.
type fittedEncoding struct {
	plan     *encode.Plan
	choice   *evaluate.EncodingChoice
	table    *tabular.Table
	features []*tabular.Column
	target   *tabular.Column // nil without --target
	kept     *keptColumns    // of every input row
}

// fitEncoding reads DATA whole and fits the plan fit would fit, on the
// rows fit would learn from, keeping the named columns.
func fitEncoding(ctx context.Context, opts encodeOptions, path string, stdin io.Reader, stderr io.Writer, keep []string) (*fittedEncoding, error) {
	var learner evaluate.Learner
	var err error
	learn := opts.learn
	if learn.target != "" {
		if learner, err = learn.learner(); err != nil {
			return nil, err
		}
	} else {
		if learner.Plan.Numeric, err = encode.ParseNumericEncoding(learn.numeric); err != nil {
			return nil, usagef("--numeric: %v", err)
		}
		if learner.Plan.Numeric.Method == encode.Auto {
			return nil, usagef("--numeric %s chooses the encoding by training on the target: give --target, or a fixed encoding such as thermometer:8", learn.numeric)
		}
		if learner.Plan.Categorical, err = encode.ParseCategoricalEncoding(learn.categorical); err != nil {
			return nil, usagef("--categorical: %v", err)
		}
	}
	if err := opts.missing.check(); err != nil {
		return nil, err
	}
	readOpts, err := opts.input.readOptions()
	if err != nil {
		return nil, err
	}
	table, _, kept, err := readTableKeeping(path, stdin, stderr, readOpts, keep)
	if err != nil {
		return nil, err
	}
	f := &fittedEncoding{kept: kept}
	defer func() {
		if f.plan == nil {
			kept.release()
		}
	}()
	if learn.target == "" || table.Column(learn.target) != nil {
		table = opts.missing.apply(table, learn.target, learn.ignore, stderr)
	}
	f.table = table
	if learn.target == "" {
		if f.features, err = tabular.Features(table, "", learn.ignore); err != nil {
			return nil, err
		}
		plan, err := encode.FitPlan(f.features, nil, learner.Plan)
		if err != nil {
			var de *tabular.DataError
			if errors.As(err, &de) && de.File == "" {
				de.File = path
			}
			return nil, err
		}
		f.plan = plan
		return f, nil
	}
	d, err := tabular.NewDataset(table, learn.target, learn.ignore)
	if err != nil {
		return nil, err
	}
	plan, choice, err := learner.FitPlan(ctx, d)
	if err != nil {
		return nil, divergenceHint(err, learn)
	}
	f.features, f.target, f.choice = d.Features, table.Column(learn.target), choice
	f.plan = plan
	return f, nil
}

// write writes the fitted encoding of its rows, a block at a time, with
// the writer's options writeOpts.
func (f *fittedEncoding) write(w io.Writer, flush func() error, format export.TableFormat, path string, writeOpts []export.TableOption) error {
	target := ""
	if f.target != nil {
		target = f.target.Name
	}
	pw, err := export.NewPatternWriter(w, format, path, f.plan.UnitNames(), target, f.kept.fields, writeOpts...)
	if err != nil {
		return usagef("--keep: %v", err)
	}
	block := blockRows(f.plan.Width())
	var values []float64
	rows := make([]int, 0, block)
	take := make([]int, 0, block)
	for lo := 0; lo < f.table.Rows; lo += block {
		hi := min(lo+block, f.table.Rows)
		rows, take = rows[:0], take[:0]
		for i := lo; i < hi; i++ {
			rows = append(rows, i)
			take = append(take, f.table.RowNumber(i)-1)
		}
		values, _ = f.plan.EncodeTo(values, f.features, rows)
		var targets *tabular.Column
		if f.target != nil {
			targets = f.target.Slice(lo, hi)
		}
		number := func(n int) int { return f.table.RowNumber(lo + n) }
		if err := pw.Write(values, hi-lo, number, targets, f.kept.arrays, take); err != nil {
			return err
		}
		if err := flush(); err != nil {
			return err
		}
	}
	return pw.Close()
}

// encodeWithModel encodes every row of DATA with a model's plan, one
// record batch at a time.
func encodeWithModel(opts encodeOptions, format export.TableFormat, path string, stdin io.Reader, stdout, stderr io.Writer) error {
	model, readOpts, err := opts.readModel(path, stdin)
	if err != nil {
		return err
	}
	plan := model.Plan
	var columns []string
	for _, f := range plan.Features {
		columns = append(columns, f.Column)
	}
	target := opts.learn.target
	if target != "" {
		if slices.Contains(columns, target) {
			return usagef("--target %s: the model's plan encodes this column as a feature", target)
		}
		columns = append(columns, target)
	}
	in, err := openStream(path, stdin, stderr, progressTo(stdout, stderr, opts.out.toFile()), readOpts, columns, false)
	if err != nil {
		return err
	}
	defer in.close()
	if target != "" && len(in.Schema().FieldIndices(target)) == 0 {
		target = "" // the target is for labelled data; other data has none
		fmt.Fprintf(stderr, "deltafit: warning: %s: no column %s, so the output has no target column\n", tabular.DisplayName(path), opts.learn.target)
	}
	keepFields, keepIndex, err := in.keepFields(opts.out.keep)
	if err != nil {
		return err
	}
	var stats encode.Stats
	err = opts.out.write(stdout, func(w io.Writer, flush func() error) error {
		pw, err := export.NewPatternWriter(w, format, path, plan.UnitNames(), target, keepFields, opts.out.tableOptions()...)
		if err != nil {
			return usagef("--keep: %v", err)
		}
		block := blockRows(plan.Width())
		var values []float64
		for in.Next() {
			t := in.Table()
			cols, err := plan.Bind(t)
			if err != nil {
				return err
			}
			kept := in.keepArrays(keepIndex)
			for lo := 0; lo < t.Rows; lo += block {
				hi := min(lo+block, t.Rows)
				var batchStats encode.Stats
				values, batchStats = plan.EncodeTo(values, cols, rowRange(lo, hi))
				batchStats.Renumber(func(r int) int { return t.RowNumber(r) })
				if err := opts.checkStrict(path, batchStats); err != nil {
					return err
				}
				stats.Merge(batchStats)
				var targets *tabular.Column
				if target != "" {
					targets = t.Column(target).Slice(lo, hi)
				}
				blockKept := make([]arrow.Array, len(kept))
				for i, a := range kept {
					blockKept[i] = array.NewSlice(a, int64(lo), int64(hi))
				}
				number := func(n int) int { return t.RowNumber(lo + n) }
				err := pw.Write(values, hi-lo, number, targets, blockKept, nil)
				for _, a := range blockKept {
					a.Release()
				}
				if err != nil {
					return err
				}
			}
			if err := flush(); err != nil {
				return err
			}
		}
		in.count.progress.finish()
		if err := in.Err(); err != nil {
			return err
		}
		return pw.Close()
	})
	if err != nil {
		return err
	}
	return opts.checkEncoding(stderr, path, stats)
}

// blockRows is how many rows encode holds encoded at once: at most 4096,
// and at most 2^20 values.
func blockRows(width int) int { return max(1, min(4096, (1<<20)/max(1, width))) }

func rowRange(lo, hi int) []int {
	rows := make([]int, hi-lo)
	for i := range rows {
		rows[i] = lo + i
	}
	return rows
}
