package evaluate

import (
	"context"
	"errors"
	"fmt"

	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// A fit on data larger than memory reads the input twice, batch by batch,
// and never holds more than a batch of it:
//
//  1. SummarizeStream: the class labels and a Summary of every feature
//     column, numeric values in a bounded Sketch, from which
//     StreamSummary.Plan fits the encoding plan;
//  2. EncodeStream: every row encoded with that plan into a fit.DiskWriter;
//  3. Learner.TrainDisk: the network trained on the fit.DiskStore read
//     back, block-shuffled (fit.Options.Block).
//
// Kept rows are those with a target value and, with DropMissing, no
// missing feature cell: the rows fit's in-memory path keeps.

// Batches is a table read one batch at a time, as ingest.TableReader reads
// it: every batch a small table of the same columns, valid until the next
// call to Next, with the rows' numbers in the whole input.
type Batches interface {
	Next() bool
	Table() *tabular.Table
	Err() error
}

// StreamOptions say which rows and columns a fit on data larger than
// memory reads.
type StreamOptions struct {
	// Target names the class column; every other column of the batches is
	// a feature.
	Target string
	// DropMissing leaves out rows with a missing feature cell. Rows
	// without a target value are always left out.
	DropMissing bool
	// SketchCapacity is the capacity per level of the numeric columns'
	// sketches; 0 means encode.DefaultSketchCapacity.
	SketchCapacity int
}

// StreamSummary is what the first pass learns of the rows.
type StreamSummary struct {
	Summaries []*encode.Summary // of the feature columns, in input order
	Labels    []string          // class labels, sorted as tabular.NewDataset sorts them
	Counts    []int             // kept rows of each class
	Rows      int               // kept rows
	// NoTarget and Dropped count the rows left out for want of a target
	// value and, with DropMissing, of a feature cell; FirstNoTarget and
	// FirstDropped are the first of them (1-based row numbers), 0 for none.
	NoTarget, Dropped           int
	FirstNoTarget, FirstDropped int
	name                        string
}

// keptRows returns the rows of batch t to learn from (nil: all), with the
// target at column index target, counting those left out into s.
func (s *StreamSummary) keptRows(t *tabular.Table, target int, opts StreamOptions) []int {
	var rows []int
	all := true
	for i := range t.Rows {
		keep := !t.Columns[target].IsMissing(i)
		if !keep {
			s.NoTarget++
			if s.FirstNoTarget == 0 {
				s.FirstNoTarget = t.RowNumber(i)
			}
		} else if opts.DropMissing {
			for k, c := range t.Columns {
				if k != target && c.IsMissing(i) {
					keep = false
					s.Dropped++
					if s.FirstDropped == 0 {
						s.FirstDropped = t.RowNumber(i)
					}
					break
				}
			}
		}
		if keep && !all {
			rows = append(rows, i)
		}
		if !keep && all {
			all = false
			rows = allRows(i)
		}
	}
	if all {
		return nil
	}
	if rows == nil {
		rows = []int{}
	}
	return rows
}

// targetIndex returns the position of the target among t's columns.
func targetIndex(t *tabular.Table, target string) (int, error) {
	for k, c := range t.Columns {
		if c.Name == target {
			return k, nil
		}
	}
	return 0, &tabular.DataError{File: t.Name, Name: target, Err: errors.New("there is no target column of that name")}
}

// SummarizeStream reads every batch of b (the first pass) and summarises
// the kept rows. Data errors name the file and the row in the whole input.
func SummarizeStream(ctx context.Context, b Batches, opts StreamOptions) (*StreamSummary, error) {
	s := &StreamSummary{}
	counts := map[string]int{}
	var targetCol tabular.Column
	target, position := -1, 0
	for b.Next() {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		t := b.Table()
		if target < 0 {
			var err error
			if target, err = targetIndex(t, opts.Target); err != nil {
				return nil, err
			}
			s.name = t.Name
			c := t.Columns[target]
			targetCol = tabular.Column{Name: c.Name, Kind: c.Kind, LabelText: c.LabelText}
			position = t.ColumnNumbers[target]
			for k, col := range t.Columns {
				if k != target {
					s.Summaries = append(s.Summaries, encode.NewStreamSummary(col.Name, col.Kind, opts.SketchCapacity))
				}
			}
		}
		rows := s.keptRows(t, target, opts)
		f := 0
		for k, col := range t.Columns {
			if k != target {
				s.Summaries[f].Add(col, rows)
				f++
			}
		}
		label := t.Columns[target]
		if rows == nil {
			for i := range t.Rows {
				counts[label.Value(i)]++
			}
		}
		for _, i := range rows {
			counts[label.Value(i)]++
		}
		s.Rows += t.Rows
		if rows != nil {
			s.Rows -= t.Rows - len(rows)
		}
	}
	if err := b.Err(); err != nil {
		return nil, err
	}
	if s.Rows == 0 {
		return nil, &tabular.DataError{File: s.name, Name: opts.Target, Err: errors.New("no row has a target value (and, with --missing drop, every feature)")}
	}
	for l := range counts {
		s.Labels = append(s.Labels, l)
	}
	tabular.SortLabels(s.Labels)
	if err := tabular.CheckLabels(s.name, &targetCol, position, s.Labels); err != nil {
		return nil, err
	}
	s.Counts = make([]int, len(s.Labels))
	for k, l := range s.Labels {
		s.Counts[k] = counts[l]
	}
	for _, sum := range s.Summaries {
		if sum.Missing == sum.Rows {
			return nil, &tabular.DataError{File: s.name, Name: sum.Column,
				Err: errors.New("every cell of the column is missing; fill it in or ignore the column")}
		}
	}
	return s, nil
}

// Plan fits the encoding plan from the summaries, as FitPlan fits it on
// rows in memory; while a numeric column's values fit its sketch its cuts
// are the exact ones, beyond that the plan's QuantileRankError bounds them.
func (s *StreamSummary) Plan(opts encode.Options) (*encode.Plan, error) {
	plan, err := encode.PlanFromSummaries(s.Summaries, opts)
	if err != nil {
		return nil, inFile(err, s.name)
	}
	if err := model.CheckSize(len(s.Labels), len(s.Summaries), plan.Width()); err != nil {
		return nil, fmt.Errorf("%s: %w", tabular.DisplayName(s.name), err)
	}
	return plan, nil
}

// EncodeStream reads every batch of b again (the second pass) and writes
// the kept rows, encoded with plan, and their classes into w. The input
// must hold the rows the first pass summarised.
func (s *StreamSummary) EncodeStream(ctx context.Context, b Batches, plan *encode.Plan, opts StreamOptions, w *fit.DiskWriter) error {
	index := make(map[string]int, len(s.Labels))
	for k, l := range s.Labels {
		index[l] = k
	}
	width := plan.Width()
	var check StreamSummary
	var values []float64
	var kept []int
	for b.Next() {
		if err := ctx.Err(); err != nil {
			return err
		}
		t := b.Table()
		target, err := targetIndex(t, opts.Target)
		if err != nil {
			return err
		}
		cols, err := plan.Bind(t)
		if err != nil {
			return err
		}
		rows := check.keptRows(t, target, opts)
		values, _ = plan.EncodeTo(values, cols, rows)
		kept = kept[:0]
		if rows == nil {
			for i := range t.Rows {
				kept = append(kept, i)
			}
		} else {
			kept = append(kept, rows...)
		}
		label := t.Columns[target]
		for n, i := range kept {
			class, ok := index[label.Value(i)]
			if !ok {
				return &tabular.DataError{File: t.Name, Row: t.RowNumber(i), Column: t.ColumnNumbers[target], Name: opts.Target,
					Err: fmt.Errorf("class %q was not in the input's first reading: the input changed while it was read", label.Value(i))}
			}
			if err := w.Append(values[n*width:(n+1)*width], class); err != nil {
				return fmt.Errorf("%s: row %d: %w", tabular.DisplayName(t.Name), t.RowNumber(i), err)
			}
		}
	}
	if err := b.Err(); err != nil {
		return err
	}
	if w.Rows() != s.Rows {
		return fmt.Errorf("%s: %d rows to learn from on the second reading, %d on the first: the input changed while it was read", tabular.DisplayName(s.name), w.Rows(), s.Rows)
	}
	return nil
}

// TrainDisk trains the learner's network on the patterns and labels of a
// disk store, encoded with plan for the given target and class labels, and
// returns the fitted classifier. The online visiting order is
// block-shuffled with the store's blocks (fit.Options.Block) unless the
// learner sets its own Block. A read error of the store is an error.
func (l Learner) TrainDisk(ctx context.Context, store *fit.DiskStore, plan *encode.Plan, target string, labels []string) (*Fitted, error) {
	classes, err := store.Classes()
	if err != nil {
		return nil, err
	}
	opts := l.Fit
	if opts.Block == 0 {
		opts.Block = store.BlockRows()
	}
	res, err := fit.TrainBytesContext(ctx, store, classes, len(labels), opts)
	if err != nil {
		return nil, err
	}
	if err := store.Err(); err != nil {
		return nil, err
	}
	c := &model.Classifier{Target: target, Labels: labels, Plan: plan, Network: res.Network}
	return &Fitted{Classifier: c, Result: res}, nil
}
