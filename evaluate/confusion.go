package evaluate

import (
	"errors"
	"fmt"
	"slices"
)

// Sentinel errors, wrapped with position by the functions that return them.
var (
	// ErrLengthMismatch means two slices that pair up row by row have
	// different lengths.
	ErrLengthMismatch = errors.New("evaluate: length mismatch")
	// ErrClassOutOfRange means a class index is outside [0, number of classes).
	ErrClassOutOfRange = errors.New("evaluate: class out of range")
	// ErrLabelsDiffer means two confusion tables have different labels.
	ErrLabelsDiffer = errors.New("evaluate: confusion tables have different labels")
)

// Confusion is a confusion table: Matrix[i][j] counts rows of true class i
// predicted as class j. Matrix is len(Labels) × len(Labels).
type Confusion struct {
	Labels []string `json:"labels"`
	Matrix [][]int  `json:"matrix"`
}

// NewConfusion returns an empty table for the given class labels. The labels
// are copied.
func NewConfusion(labels []string) *Confusion {
	n := len(labels)
	cells := make([]int, n*n)
	matrix := make([][]int, n)
	for i := range matrix {
		matrix[i] = cells[i*n : (i+1)*n : (i+1)*n]
	}
	return &Confusion{Labels: slices.Clone(labels), Matrix: matrix}
}

// Add counts one row of true class truth predicted as class predicted.
// It panics if either index is outside [0, len(c.Labels)); use AddAll for
// indexes that come from data.
func (c *Confusion) Add(truth, predicted int) {
	if err := c.checkClass("truth", truth); err != nil {
		panic(err)
	}
	if err := c.checkClass("predicted", predicted); err != nil {
		panic(err)
	}
	c.Matrix[truth][predicted]++
}

// AddAll counts truth[i] against predicted[i] for every i. It returns an
// error wrapping ErrLengthMismatch or ErrClassOutOfRange, and then adds
// nothing.
func (c *Confusion) AddAll(truth, predicted []int) error {
	if len(truth) != len(predicted) {
		return fmt.Errorf("%w: %d true classes, %d predicted", ErrLengthMismatch, len(truth), len(predicted))
	}
	for i := range truth {
		if err := c.checkClass("truth", truth[i]); err != nil {
			return fmt.Errorf("evaluate: row %d: %w", i, err)
		}
		if err := c.checkClass("predicted", predicted[i]); err != nil {
			return fmt.Errorf("evaluate: row %d: %w", i, err)
		}
	}
	for i := range truth {
		c.Matrix[truth[i]][predicted[i]]++
	}
	return nil
}

func (c *Confusion) checkClass(role string, class int) error {
	if class < 0 || class >= len(c.Labels) {
		return fmt.Errorf("%w: %s class %d outside [0, %d)", ErrClassOutOfRange, role, class, len(c.Labels))
	}
	return nil
}

// Merge adds the counts of other into c. The tables must have the same
// labels in the same order; otherwise Merge returns an error wrapping
// ErrLabelsDiffer and leaves c unchanged.
func (c *Confusion) Merge(other *Confusion) error {
	if !slices.Equal(c.Labels, other.Labels) {
		return fmt.Errorf("%w: %q and %q", ErrLabelsDiffer, c.Labels, other.Labels)
	}
	n := len(c.Labels)
	if len(other.Matrix) != n {
		return fmt.Errorf("evaluate: merge: matrix has %d rows for %d labels", len(other.Matrix), n)
	}
	for i, row := range other.Matrix {
		if len(row) != n {
			return fmt.Errorf("evaluate: merge: matrix row %d has %d columns for %d labels", i, len(row), n)
		}
	}
	for i, row := range other.Matrix {
		for j, count := range row {
			c.Matrix[i][j] += count
		}
	}
	return nil
}

// Total returns the number of rows counted.
func (c *Confusion) Total() int {
	total := 0
	for _, row := range c.Matrix {
		for _, count := range row {
			total += count
		}
	}
	return total
}

// RowTotals returns, per class, the number of rows of that true class
// (its support).
func (c *Confusion) RowTotals() []int {
	totals := make([]int, len(c.Matrix))
	for i, row := range c.Matrix {
		for _, count := range row {
			totals[i] += count
		}
	}
	return totals
}

// ColTotals returns, per class, the number of rows predicted as that class.
func (c *Confusion) ColTotals() []int {
	totals := make([]int, len(c.Matrix))
	for _, row := range c.Matrix {
		for j, count := range row {
			totals[j] += count
		}
	}
	return totals
}

// correct returns the number of rows on the diagonal.
func (c *Confusion) correct() int {
	sum := 0
	for i := range c.Matrix {
		sum += c.Matrix[i][i]
	}
	return sum
}
