package evaluate

import (
	"deltafit/fit/model"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// ScoreTable classifies every row of t with c and tallies the predictions
// against the classes in c's target column, which t must have. Warnings
// about cells the plan was not fitted on are in the stats.
func ScoreTable(c *model.Classifier, t *tabular.Table) (*Confusion, encode.Stats, error) {
	s, stats, err := ScoreTableRows(c, t)
	if err != nil {
		return nil, stats, err
	}
	return s.Confusion, stats, nil
}

// Scoring is the outcome of classifying labelled rows: the predictions,
// the rows' true classes in the same order, and their tally.
type Scoring struct {
	Predictions *model.Predictions
	Truth       []int
	Confusion   *Confusion
}

// ScoreTableRows is ScoreTable keeping the predictions and true classes.
func ScoreTableRows(c *model.Classifier, t *tabular.Table) (*Scoring, encode.Stats, error) {
	truth, err := tabular.TargetClasses(t, c.Target, c.Labels)
	if err != nil {
		return nil, encode.Stats{}, err
	}
	p, stats, err := c.PredictTable(t)
	if err != nil {
		return nil, stats, err
	}
	confusion := NewConfusion(c.Labels)
	if err := confusion.AddAll(truth, p.Predicted); err != nil {
		return nil, stats, err
	}
	return &Scoring{Predictions: p, Truth: truth, Confusion: confusion}, stats, nil
}
