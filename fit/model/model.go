package model

import (
	"errors"
	"fmt"
	"math"

	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// Classifier is a fitted classifier.
type Classifier struct {
	Target  string       `json:"target"` // the column whose classes Labels lists
	Labels  []string     `json:"labels"` // class labels; class i is Labels[i]
	Plan    *encode.Plan `json:"plan"`
	Network *fit.Network `json:"network"`
}

// Predictions are the classes and per-class scores of some rows.
type Predictions struct {
	Labels []string
	Rows   []int // 0-based rows of the table, in the order scored
	// RowNumbers are the rows' 1-based numbers in the input, for output and
	// messages (tabular.Table.RowNumber); nil means Rows[n]+1.
	RowNumbers []int
	Predicted  []int     // class index per row
	Scores     []float64 // len(Labels) scores per row, row after row
}

// RowNumber returns the 1-based input row number of the n-th row scored.
func (p *Predictions) RowNumber(n int) int {
	if p.RowNumbers == nil {
		return p.Rows[n] + 1
	}
	return p.RowNumbers[n]
}

// Len is the number of rows.
func (p *Predictions) Len() int { return len(p.Predicted) }

// ScoresOf returns the scores of the n-th row scored. The slice aliases
// Scores.
func (p *Predictions) ScoresOf(n int) []float64 {
	k := len(p.Labels)
	return p.Scores[n*k : (n+1)*k : (n+1)*k]
}

// PredictTable scores every row of t, whose columns are found by name.
// Warnings about cells the plan was not fitted on are in the stats.
func (c *Classifier) PredictTable(t *tabular.Table) (*Predictions, encode.Stats, error) {
	cols, err := c.Plan.Bind(t)
	if err != nil {
		return nil, encode.Stats{}, err
	}
	p, stats, err := c.Predict(t.Name, cols, nil)
	// Rows left out after reading keep their input numbers in messages.
	var de *tabular.DataError
	if errors.As(err, &de) && de.Row > 0 {
		de.Row = t.RowNumber(de.Row - 1)
	}
	stats.Renumber(t.RowNumber)
	if p != nil && t.RowNumbers != nil {
		p.RowNumbers = t.RowNumbers
	}
	return p, stats, err
}

// blockValues is the most encoded values Predict holds at once.
const blockValues = 1 << 20

// Predict scores rows (0-based; nil means all) of cols, the plan's columns
// as Plan.Bind returns them or the features it was fitted on. file names the
// data in errors.
func (c *Classifier) Predict(file string, cols []*tabular.Column, rows []int) (*Predictions, encode.Stats, error) {
	var stats encode.Stats
	if rows == nil {
		n := 0
		if len(cols) > 0 {
			n = cols[0].Len()
		}
		rows = allRows(n)
	}
	p := c.newPredictions(rows)
	width := c.Plan.Width()
	// A plan of many units (up to encode.MaxWidth) needs one block of
	// patterns, not one per row.
	block := max(1, blockValues/max(1, width))
	var values []float64
	for lo := 0; lo < len(rows); lo += block {
		hi := min(lo+block, len(rows))
		var blockStats encode.Stats
		values, blockStats = c.Plan.EncodeTo(values, cols, rows[lo:hi])
		stats.Merge(blockStats)
		for n := lo; n < hi; n++ {
			if err := c.score(p, n, values[(n-lo)*width:(n-lo+1)*width], file); err != nil {
				return nil, stats, err
			}
		}
	}
	return p, stats, nil
}

// PredictPatterns scores rows (0-based; nil means all) of patterns already
// encoded with the classifier's plan, as cross-validation holds them.
func (c *Classifier) PredictPatterns(file string, patterns fit.Store, rows []int) (*Predictions, error) {
	if rows == nil {
		rows = allRows(patterns.Len())
	}
	p := c.newPredictions(rows)
	x := make([]float64, patterns.Inputs())
	for n, r := range rows {
		if err := c.score(p, n, patterns.RowTo(x, r), file); err != nil {
			return nil, err
		}
	}
	return p, nil
}

func (c *Classifier) newPredictions(rows []int) *Predictions {
	return &Predictions{
		Labels:    c.Labels,
		Rows:      rows,
		Predicted: make([]int, len(rows)),
		Scores:    make([]float64, len(rows)*len(c.Labels)),
	}
}

// score scores pattern x as the n-th row of p: every scoring of a row
// passes here.
func (c *Classifier) score(p *Predictions, n int, x []float64, file string) error {
	scores := c.Network.ScoresTo(p.ScoresOf(n), x)
	for _, s := range scores {
		if !finite(s) {
			return &tabular.DataError{File: file, Row: p.Rows[n] + 1,
				Err: errors.New("the model's scores for the row are not finite; its inputs are far outside the range of the training data")}
		}
	}
	p.Predicted[n] = fit.Decide(scores)
	return nil
}

func allRows(n int) []int {
	rows := make([]int, n)
	for i := range rows {
		rows[i] = i
	}
	return rows
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// The largest classifier a model file may hold: a model reader refuses
// more, so fitting checks them before any training.
const (
	MaxClasses  = encode.MaxCategories
	MaxFeatures = encode.MaxFeatures
	MaxInputs   = encode.MaxWidth
)

// ErrTooLarge is wrapped by the errors of CheckSize.
var ErrTooLarge = errors.New("model: larger than a model file may hold")

// CheckSize reports whether a classifier of classes classes, features
// feature columns and inputs input units fits the caps; the error names
// the figure and the cap.
func CheckSize(classes, features, inputs int) error {
	switch {
	case classes > MaxClasses:
		return fmt.Errorf("%w: %d classes, over the cap of %d", ErrTooLarge, classes, MaxClasses)
	case features > MaxFeatures:
		return fmt.Errorf("%w: %d feature columns, over the cap of %d", ErrTooLarge, features, MaxFeatures)
	case inputs > MaxInputs:
		return fmt.Errorf("%w: %d input units, over the cap of %d", ErrTooLarge, inputs, MaxInputs)
	}
	return nil
}
