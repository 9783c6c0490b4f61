package model

import (
	"errors"

	"deltafit/fit"
	"deltafit/ingest/tabular"
)

// ScoresNonNegative reports whether every score the classifier gives is
// at least 0, so that a row's scores can be divided by their sum: the
// outputs of logistic units lie in (0, 1), and a single unit's pair
// (On+Off−y, y) does too when On+Off ≥ 1. Linear units can give any
// number.
func (c *Classifier) ScoresNonNegative() bool {
	n := c.Network
	return n.Unit == fit.Logistic && (len(n.Weights) != 1 || n.On+n.Off >= 1)
}

// Normalize divides each row's scores by their sum, so that they sum to 1
// and keep their order (the predicted class does not change). It is meant
// for scores that are never negative (ScoresNonNegative); a row with a
// negative score, or whose scores sum to 0 or to no finite number, is an
// error naming the row, and p is then partly normalized. file names the
// data in errors.
//
// The result is the units' outputs rescaled, not a calibrated probability.
func (p *Predictions) Normalize(file string) error {
	for n := range p.Len() {
		scores := p.ScoresOf(n)
		sum := 0.0
		for _, s := range scores {
			if s < 0 {
				return p.rowError(file, n, "a score is negative, so the scores cannot be divided by their sum; use raw scores")
			}
			sum += s
		}
		if !(sum > 0) || !finite(sum) {
			return p.rowError(file, n, "the scores sum to 0 or to no finite number, so they cannot be divided by their sum; use raw scores")
		}
		for j := range scores {
			scores[j] /= sum
		}
	}
	return nil
}

func (p *Predictions) rowError(file string, n int, msg string) error {
	return &tabular.DataError{File: file, Row: p.RowNumber(n), Err: errors.New(msg)}
}
