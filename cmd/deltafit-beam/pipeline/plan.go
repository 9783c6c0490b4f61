package pipeline

import (
	"encoding/json"
	"errors"
	"fmt"
	"slices"
	"strconv"

	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// The plan pass: per block, the summary of every feature column over the
// training rows of each plan (encode.Summarize: category counts, moments,
// and the present values of numeric columns); combined, in block order,
// with encode.Summary.Merge, so that each plan is encode.PlanFromSummaries
// of the summaries of its rows in row order: the plan encode.FitPlan fits
// on those rows, exactly. Numeric summaries keep their values, so the
// combine holds 8 bytes per numeric cell of the data; with
// Config.SketchCapacity they keep a bounded sketch instead (a file's
// blocks merged as they are read), whose cuts are exact while a column has
// no more present values than the capacity and otherwise within the
// sketch's rank error, which the plan and a warning report.

// planPartial is a block's contribution to the plan pass.
type planPartial struct {
	Err string `json:"error,omitempty"`
	// SHA256 of the block's file, given with the file's first block.
	SHA256        string       `json:"sha256,omitempty"`
	File          string       `json:"file"`
	Path          string       `json:"path"`
	Read          int          `json:"read"`
	NoTarget      int          `json:"no_target"`
	Dropped       int          `json:"dropped"`
	FirstNoTarget int          `json:"first_no_target"`
	FirstDropped  int          `json:"first_dropped"`
	Columns       []columnInfo `json:"columns"`
	// Plans are the summaries per plan (0: all rows; k: rows outside fold
	// k), one per feature column, in table order.
	Plans [][]*encode.Summary `json:"plans"`
	// Labels counts the target values of the block's rows, and LabelRows
	// the same per plan.
	Labels    map[string]int   `json:"labels"`
	LabelRows []map[string]int `json:"label_rows"`
}

// columnInfo is a column's name and kind as read.
type columnInfo struct {
	Name      string       `json:"name"`
	Kind      tabular.Kind `json:"kind"`
	LabelText bool         `json:"label_text,omitempty"`
}

// blockRowFolds returns the 0-based fold of each row of b, or nil without
// folds.
func blockRowFolds(c *Config, b *block, folds *foldIndex) ([]int, error) {
	if folds == nil {
		return nil, nil
	}
	target := b.Table.Column(c.Target)
	rowFolds := make([]int, b.Table.Rows)
	for i := range rowFolds {
		class := folds.class(target.Value(i))
		if class < 0 {
			return nil, fmt.Errorf("pipeline: %s row %d: class %q not seen by the fold pass", b.Path, b.Table.RowNumber(i), target.Value(i))
		}
		rowFolds[i] = folds.foldOf(class, rowHash(b.File, b.Table.RowNumber(i), foldSeed(c)))
	}
	return rowFolds, nil
}

// foldSeed is the seed of the fold hashes.
func foldSeed(c *Config) uint64 { return c.Seed }

// planRows returns the rows of a block that fit plan p (0: all, k: those
// outside fold k), nil meaning all.
func planRows(p int, rowFolds []int) []int {
	if p == 0 || rowFolds == nil {
		return nil
	}
	rows := make([]int, 0, len(rowFolds))
	for i, f := range rowFolds {
		if f != p-1 {
			rows = append(rows, i)
		}
	}
	return rows
}

// summarizeBlock is the plan pass's work on one block.
func summarizeBlock(c *Config, b *block, folds *foldIndex) (*planPartial, error) {
	t := b.Table
	p := &planPartial{
		File: b.File, Path: b.Path, Read: b.Read,
		NoTarget: b.NoTarget, Dropped: b.Dropped, FirstNoTarget: b.FirstNoTarget, FirstDropped: b.FirstDropped,
	}
	for _, col := range t.Columns {
		p.Columns = append(p.Columns, columnInfo{Name: col.Name, Kind: col.Kind, LabelText: col.LabelText})
	}
	target := t.Column(c.Target)
	if target == nil {
		return p, nil // the combine names the missing column once
	}
	rowFolds, err := blockRowFolds(c, b, folds)
	if err != nil {
		return nil, err
	}
	plans := 1
	if folds != nil {
		plans += c.Folds
	}
	p.Labels = map[string]int{}
	for i := range t.Rows {
		p.Labels[target.Value(i)]++
	}
	for k := range plans {
		rows := planRows(k, rowFolds)
		var summaries []*encode.Summary
		for _, col := range t.Columns {
			if col == target || slices.Contains(c.Ignore, col.Name) {
				continue
			}
			summaries = append(summaries, summarize(c, col, rows))
		}
		labels := map[string]int{}
		if rows == nil {
			labels = p.Labels
		}
		for _, i := range rows {
			labels[target.Value(i)]++
		}
		p.Plans = append(p.Plans, summaries)
		p.LabelRows = append(p.LabelRows, labels)
	}
	return p, nil
}

// reducePlan merges the plan partials, in block order, into the run's
// first state: labels, plans and the untrained models.
func reducePlan(c *Config, parts []Partial) *State {
	s, err := mergePlan(c, parts)
	if err != nil {
		return failed(err)
	}
	return s
}

func mergePlan(c *Config, parts []Partial) (*State, error) {
	var merged *planPartial
	var first *planPartial // the first block, whose columns every block must have
	files := map[string]*FileInfo{}
	s := &State{Target: c.Target, Kinds: map[string]string{}}
	var firstNoTarget, firstDropped string
	for _, part := range parts {
		var p planPartial
		if err := json.Unmarshal(part.Data, &p); err != nil {
			return nil, fmt.Errorf("pipeline: plan partial: %w", err)
		}
		if p.Err != "" {
			return nil, errors.New(p.Err)
		}
		f := files[p.File]
		if f == nil {
			f = &FileInfo{Key: p.File}
			files[p.File] = f
		}
		f.Rows += p.Read
		if p.SHA256 != "" {
			f.SHA256 = p.SHA256
		}
		if p.NoTarget > 0 && firstNoTarget == "" {
			firstNoTarget = fmt.Sprintf("%s row %d", tabular.DisplayName(p.Path), p.FirstNoTarget)
		}
		if p.Dropped > 0 && firstDropped == "" {
			firstDropped = fmt.Sprintf("%s row %d", tabular.DisplayName(p.Path), p.FirstDropped)
		}
		s.NoTarget += p.NoTarget
		s.Dropped += p.Dropped
		if first == nil {
			first = &p
			if err := checkColumns(c, &p); err != nil {
				return nil, err
			}
		} else if err := sameColumns(first, &p); err != nil {
			return nil, err
		}
		if merged == nil {
			if len(p.Plans) > 0 {
				merged = &p
			}
			continue
		}
		if err := merged.mergeSummaries(&p); err != nil {
			return nil, err
		}
	}
	if first == nil {
		return nil, errors.New("pipeline: the input holds no rows")
	}
	for key := range files {
		s.Files = append(s.Files, *files[key])
	}
	slices.SortFunc(s.Files, func(a, b FileInfo) int { return cmpString(a.Key, b.Key) })
	if s.NoTarget > 0 {
		s.Warnings = append(s.Warnings, fmt.Sprintf("%d %s with no target value left out (first at %s): a row needs its class to be learned from or scored",
			s.NoTarget, plural(s.NoTarget, "row", "rows"), firstNoTarget))
	}
	if s.Dropped > 0 {
		s.Warnings = append(s.Warnings, fmt.Sprintf("%d %s with a missing cell left out by --missing drop (first at %s)",
			s.Dropped, plural(s.Dropped, "row", "rows"), firstDropped))
	}
	if merged == nil {
		return nil, &tabular.DataError{File: first.Path, Err: errors.New("no row has a target value")}
	}
	targetInfo := first.Columns[columnIndex(first.Columns, c.Target)]
	labels, sameNumber, err := sortedLabels(first.Path, targetInfo, columnIndex(first.Columns, c.Target)+1, merged.LabelRows[0])
	if err != nil {
		return nil, err
	}
	for _, same := range sameNumber {
		s.Warnings = append(s.Warnings, fmt.Sprintf("column %s: the labels %s are different classes though they are the same number; declare the column numeric (--kind %s=numeric) to make them one class",
			c.Target, quoteJoin(same), c.Target))
	}
	s.Labels = labels
	for _, col := range first.Columns {
		if col.Name == c.Target {
			continue
		}
		s.Kinds[col.Name] = col.Kind.String()
		if !slices.Contains(c.Ignore, col.Name) {
			s.Features = append(s.Features, col.Name)
		}
	}
	s.ClassCounts = counts(labels, merged.LabelRows[0])
	for _, n := range s.ClassCounts {
		s.Rows += n
	}
	opts, err := c.encodeOptions()
	if err != nil {
		return nil, err
	}
	for k, summaries := range merged.Plans {
		for _, sum := range summaries {
			if k == 0 && sum.Missing == sum.Rows {
				return nil, &tabular.DataError{File: first.Path, Column: columnIndex(first.Columns, sum.Column) + 1, Name: sum.Column,
					Err: errors.New("every cell of the column is missing; fill it in or ignore the column")}
			}
		}
		plan, err := encode.PlanFromSummaries(summaries, opts)
		if err != nil {
			var de *tabular.DataError
			if errors.As(err, &de) && de.File == "" {
				de.File = first.Path
			}
			return nil, err
		}
		if err := model.CheckSize(len(labels), len(summaries), plan.Width()); err != nil {
			return nil, fmt.Errorf("%s: %w", tabular.DisplayName(first.Path), err)
		}
		if k == 0 && plan.QuantileRankError > 0 {
			s.Warnings = append(s.Warnings, fmt.Sprintf("the quantile cuts come from sketches of at most %d values a level: each cut's rank is within %.3g%% of the rows of its exact rank", c.SketchCapacity, 100*plan.QuantileRankError))
		}
		s.Plans = append(s.Plans, plan)
	}
	if err := s.addModels(c, merged.LabelRows); err != nil {
		return nil, err
	}
	return s, nil
}

// summarize summarises col on rows for the plan: every present value of a
// numeric column (exact cuts), or with Config.SketchCapacity a bounded
// sketch of them (encode.Sketch: exact until a column holds more values,
// then within its stated rank error).
func summarize(c *Config, col *tabular.Column, rows []int) *encode.Summary {
	if c.SketchCapacity <= 0 {
		return encode.Summarize(col, rows)
	}
	s := encode.NewStreamSummary(col.Name, col.Kind, c.SketchCapacity)
	s.Add(col, rows)
	return s
}

// mergeSummaries adds the summaries and label counts of later rows; a
// partial without summaries (its rows were all left out) adds nothing.
func (p *planPartial) mergeSummaries(q *planPartial) error {
	if len(q.Plans) == 0 {
		return nil
	}
	if len(p.Plans) == 0 {
		p.Plans, p.Labels, p.LabelRows = q.Plans, q.Labels, q.LabelRows
		return nil
	}
	for k := range p.Plans {
		for i, sum := range p.Plans[k] {
			if err := sum.Merge(q.Plans[k][i]); err != nil {
				return err
			}
		}
		addCounts(p.LabelRows[k], q.LabelRows[k])
	}
	return nil
}

// absorb adds the partial of the next block of the same file.
func (p *planPartial) absorb(q *planPartial) error {
	if err := sameColumns(p, q); err != nil {
		return err
	}
	p.Read += q.Read
	if p.NoTarget == 0 {
		p.FirstNoTarget = q.FirstNoTarget
	}
	if p.Dropped == 0 {
		p.FirstDropped = q.FirstDropped
	}
	p.NoTarget += q.NoTarget
	p.Dropped += q.Dropped
	return p.mergeSummaries(q)
}

// checkColumns checks the target and ignored columns against a block's.
func checkColumns(c *Config, p *planPartial) error {
	names := make([]string, len(p.Columns))
	for i, col := range p.Columns {
		names[i] = col.Name
	}
	if !slices.Contains(names, c.Target) {
		return &tabular.DataError{File: p.Path, Name: c.Target, Err: fmt.Errorf("there is no target column of that name; the columns are %s", quoteJoinComma(names))}
	}
	for _, name := range c.Ignore {
		if name == c.Target {
			return &tabular.DataError{File: p.Path, Name: name, Err: errors.New("the target column cannot also be ignored")}
		}
		if !slices.Contains(names, name) {
			return &tabular.DataError{File: p.Path, Name: name, Err: fmt.Errorf("there is no column of that name to ignore; the columns are %s", quoteJoinComma(names))}
		}
	}
	return nil
}

// sameColumns checks that a block has the columns, in order, and column
// kinds of the first block.
func sameColumns(first, p *planPartial) error {
	if len(p.Columns) != len(first.Columns) {
		return &tabular.DataError{File: p.Path, Err: fmt.Errorf("the file has %d columns, but %s has %d; every input file needs the same columns", len(p.Columns), tabular.DisplayName(first.Path), len(first.Columns))}
	}
	for i, col := range p.Columns {
		want := first.Columns[i]
		if col.Name != want.Name {
			return &tabular.DataError{File: p.Path, Column: i + 1, Name: col.Name, Err: fmt.Errorf("the column is %q in %s; every input file needs the same columns in the same order", want.Name, tabular.DisplayName(first.Path))}
		}
		if col.Kind != want.Kind {
			return &tabular.DataError{File: p.Path, Column: i + 1, Name: col.Name,
				Err: fmt.Errorf("the column reads as %s in the rows from %s on, but as %s before; kinds are inferred per block of rows, so declare it (--kind %s=%s)", col.Kind, p.File, want.Kind, col.Name, want.Kind)}
		}
	}
	return nil
}

// sortedLabels returns the class labels in the order tabular.NewDataset
// gives them, with its checks (at least two classes, not too many distinct
// numbers), from the target's value counts.
func sortedLabels(file string, target columnInfo, column int, counts map[string]int) ([]string, [][]string, error) {
	values := make([]string, 0, len(counts))
	for v := range counts {
		values = append(values, v)
	}
	slices.Sort(values)
	col := &tabular.Column{Name: target.Name, Kind: target.Kind, LabelText: target.LabelText}
	for _, v := range values {
		switch target.Kind {
		case tabular.Categorical:
			col.Text = append(col.Text, v)
		case tabular.Boolean:
			col.Numbers = append(col.Numbers, boolNumber(v))
		default:
			x, err := strconv.ParseFloat(v, 64)
			if err != nil {
				return nil, nil, fmt.Errorf("pipeline: numeric label %q: %w", v, err)
			}
			col.Numbers = append(col.Numbers, x)
		}
	}
	t := &tabular.Table{Name: file, Rows: len(values), Columns: []*tabular.Column{col}}
	d, err := tabular.NewDataset(t, target.Name, nil)
	if err != nil {
		var de *tabular.DataError
		if errors.As(err, &de) && de.Column > 0 {
			de.Column = column
		}
		return nil, nil, err
	}
	return d.Labels, d.SameNumber, nil
}

func boolNumber(v string) float64 {
	if v == "true" {
		return 1
	}
	return 0
}

// addModels sets up the untrained models: the main model on every row, and
// with K folds the main model and the Hebbian baseline of each fold.
func (s *State) addModels(c *Config, labelRows []map[string]int) error {
	rule, unit, err := c.rule()
	if err != nil {
		return err
	}
	add := func(kind string, fold int) {
		r := rule
		if kind == KindHebbian {
			r = fit.Hebbian{}
		}
		classCounts := counts(s.Labels, labelRows[fold])
		m := &ModelState{Kind: kind, Fold: fold, Plan: fold, Majority: majority(classCounts),
			Network: newNetwork(r, unit, s.Plans[fold].Width(), len(s.Labels))}
		for _, n := range classCounts {
			m.TrainRows += n
		}
		s.Models = append(s.Models, m)
	}
	add(KindMain, 0)
	if c.Folds >= 2 {
		for k := 1; k <= c.Folds; k++ {
			add(KindMain, k)
		}
		for k := 1; k <= c.Folds; k++ {
			add(KindHebbian, k)
		}
	}
	return nil
}

// counts returns the count of each label, in label order.
func counts(labels []string, byLabel map[string]int) []int {
	out := make([]int, len(labels))
	for i, l := range labels {
		out[i] = byLabel[l]
	}
	return out
}

// majority is the most frequent class, ties to the lowest index, as
// evaluate.Majority.
func majority(counts []int) int {
	best := 0
	for c, n := range counts {
		if n > counts[best] {
			best = c
		}
	}
	return best
}

func addCounts(dst, src map[string]int) {
	for k, v := range src {
		dst[k] += v
	}
}

func columnIndex(cols []columnInfo, name string) int {
	for i, c := range cols {
		if c.Name == name {
			return i
		}
	}
	return -1
}

func cmpString(a, b string) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

func plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

func quoteJoin(labels []string) string {
	s := ""
	for i, l := range labels {
		if i > 0 {
			s += " and "
		}
		s += strconv.Quote(l)
	}
	return s
}

func quoteJoinComma(names []string) string {
	s := ""
	for i, n := range names {
		if i > 0 {
			s += ", "
		}
		s += strconv.Quote(n)
	}
	return s
}
