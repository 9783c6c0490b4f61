package evaluate

import (
	"context"
	"fmt"
	"slices"

	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// EncodingChoice records how a learner with the auto numeric encoding chose
// among encode.AutoCandidates on its training rows.
type EncodingChoice struct {
	Chosen string `json:"chosen"` // the encoding fitted, as the flags take it
	// Basis says how it was chosen: on an inner split of the training rows,
	// or why there was none.
	Basis      string      `json:"basis"`
	TrainRows  int         `json:"train_rows"`       // inner training rows
	CheckRows  int         `json:"check_rows"`       // inner held-out rows the candidates were scored on
	Candidates []Candidate `json:"candidates"`       // in tie-break order
	Failed     []string    `json:"failed,omitempty"` // candidates that could not be fitted, with why
}

// Candidate is one encoding's accuracy on the inner held-out rows.
type Candidate struct {
	Encoding string  `json:"encoding"`
	Accuracy float64 `json:"accuracy"`
}

// Inner split of an auto choice: stratified, one fold of autoFolds held
// out, the folds drawn from the learner's seed on a stream of their own.
const (
	autoFolds   = 4
	autoStream  = 1 << 32
	autoMinRows = 20
)

// chooseNumeric chooses the numeric encoding of an auto learner on rows of
// d (nil means all): each candidate is fitted on three quarters of the rows
// (a stratified split) and scored on the rest; the most accurate wins, ties
// going to the candidate with fewer units. With fewer than autoMinRows rows,
// there is nothing to choose on and the thermometer candidate is taken;
// with no numeric feature there is nothing to choose and the choice is nil.
func (l Learner) chooseNumeric(ctx context.Context, d *tabular.Dataset, rows []int, workers int) (encode.Encoding, *EncodingChoice, error) {
	candidates := encode.AutoCandidates(l.Plan.Numeric)
	fallback := candidates[1]
	if rows == nil {
		rows = allRows(d.Table.Rows)
	}
	choice := &EncodingChoice{Chosen: fallback.String()}
	if !slices.ContainsFunc(d.Features, func(c *tabular.Column) bool { return c.Kind == tabular.Numeric }) {
		return fallback, nil, nil // nothing to choose
	}
	if len(rows) < autoMinRows {
		choice.Basis = fmt.Sprintf("fewer than %d training rows: no inner split", autoMinRows)
		return fallback, choice, nil
	}
	inner, err := StratifiedFoldsRepeat(classesOf(d, rows), len(d.Labels), autoFolds, l.Fit.Seed, autoStream)
	if err != nil {
		return fallback, nil, err
	}
	check := make([]int, len(inner[0]))
	for i, k := range inner[0] {
		check[i] = rows[k]
	}
	train := make([]int, 0, len(rows)-len(check))
	for _, k := range TrainRows(inner, 0) {
		train = append(train, rows[k])
	}
	choice.Basis = "inner split: a stratified quarter of the training rows held out"
	choice.TrainRows, choice.CheckRows = len(train), len(check)
	truth := classesOf(d, check)
	best, bestAccuracy := -1, -1.0
	var firstErr error
	for k, e := range candidates {
		accuracy, err := l.scoreCandidate(ctx, d, e, train, check, truth, workers)
		if err != nil {
			if ctx.Err() != nil {
				return fallback, nil, err
			}
			if firstErr == nil {
				firstErr = err
			}
			choice.Failed = append(choice.Failed, fmt.Sprintf("%s: %v", e, err))
			continue
		}
		choice.Candidates = append(choice.Candidates, Candidate{Encoding: e.String(), Accuracy: accuracy})
		if accuracy > bestAccuracy {
			best, bestAccuracy = k, accuracy
		}
	}
	if best < 0 {
		return fallback, nil, firstErr
	}
	choice.Chosen = candidates[best].String()
	return candidates[best], choice, nil
}

// scoreCandidate fits l with numeric encoding e on the train rows of d and
// returns its accuracy on the check rows, whose classes are truth.
func (l Learner) scoreCandidate(ctx context.Context, d *tabular.Dataset, e encode.Encoding, train, check, truth []int, workers int) (float64, error) {
	l.Plan.Numeric = e
	l.Fit.Recorder = nil // it hears only the fit the learner returns
	fitted, all, err := l.train(ctx, d, train, workers)
	if err != nil {
		return 0, err
	}
	p, err := fitted.Classifier.PredictPatterns(d.Table.Name, all, check)
	if err != nil {
		return 0, err
	}
	right := 0
	for n, c := range p.Predicted {
		if c == truth[n] {
			right++
		}
	}
	return float64(right) / float64(len(truth)), nil
}
