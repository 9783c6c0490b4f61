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
	return confusion, stats, nil
}
