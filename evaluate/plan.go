package evaluate

import (
	"context"
	"runtime"

	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// FitPlan fits the learner's encoding plan on every row of d, exactly as
// RunStudy fits the plan of the model it trains on all rows: an auto
// numeric encoding is first chosen on an inner split of the rows, which
// trains a network for each candidate. The choice is nil when the encoding
// was given.
func (l Learner) FitPlan(ctx context.Context, d *tabular.Dataset) (*encode.Plan, *EncodingChoice, error) {
	if l.Fit.Workers == 0 {
		l.Fit.Workers = runtime.GOMAXPROCS(0)
	}
	var choice *EncodingChoice
	if l.Plan.Numeric.Method == encode.Auto {
		var err error
		if l.Plan.Numeric, choice, err = l.chooseNumeric(ctx, d, nil, l.Fit.Workers); err != nil {
			return nil, nil, inFile(err, d.Table.Name)
		}
	}
	plan, err := encode.FitPlan(d.Features, nil, l.Plan)
	if err != nil {
		return nil, nil, inFile(err, d.Table.Name)
	}
	return plan, choice, nil
}
