package evaluate

import (
	"context"
	"fmt"
	"runtime"
	"sync"

	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// Learner fits an encoding plan and a network together on training rows.
// The plan sees only those rows, so cross-validation never leaks the
// held-out fold into the encoding.
type Learner struct {
	Plan encode.Options
	Fit  fit.Options
}

// DefaultLearner is the learner deltafit fit uses when no flag says
// otherwise: the auto numeric encoding, one-hot categories, the delta rule
// on logistic units with averaged online updates at the automatic rate and
// weight decay fit.DefaultL2, training on past zero errors until the loss
// stops falling.
func DefaultLearner(seed uint64) Learner {
	auto, err := encode.ParseNumericEncoding(encode.Auto)
	if err != nil {
		panic(err) // the package's own constant
	}
	return Learner{
		Plan: encode.Options{Numeric: auto, Categorical: encode.Encoding{Method: encode.OneHot, Min: 1}},
		Fit: fit.Options{Rule: fit.Delta{}, Unit: fit.Logistic, Epochs: fit.DefaultEpochs, Seed: seed, KeepGoing: true,
			L2: fit.DefaultL2, Tolerance: fit.DefaultTolerance, Patience: fit.DefaultPatience},
	}
}

// Fitted is a plan and the network trained on its patterns.
type Fitted struct {
	Classifier *model.Classifier
	Result     *fit.Result
	// Encoding says how the numeric encoding was chosen when the learner's
	// was auto; nil otherwise.
	Encoding *EncodingChoice
}

// Train fits the plan on rows of d (0-based; nil means all) and trains the
// network on the encoded rows, with l.Fit.Workers measuring each epoch.
func (l Learner) Train(d *tabular.Dataset, rows []int) (*Fitted, error) {
	fitted, _, err := l.train(context.Background(), d, rows, l.Fit.Workers)
	return fitted, err
}

// train fits the plan on rows of d (nil means all), encodes every row of
// d with it into one store, and trains on the view of the given rows with
// workers measuring each epoch. It returns the store too, so that
// cross-validation predicts its test rows from the same encoding without
// encoding them again.
func (l Learner) train(ctx context.Context, d *tabular.Dataset, rows []int, workers int) (*Fitted, fit.Store, error) {
	plan, all, choice, err := l.encode(ctx, d, rows, workers)
	if err != nil {
		return nil, nil, err
	}
	store, classes := all, d.Classes
	if rows != nil {
		store, classes = fit.Subset(all, rows), classesOf(d, rows)
	}
	opts := l.Fit
	opts.Workers = workers
	res, err := fit.TrainContext(ctx, store, classes, len(d.Labels), opts)
	if err != nil {
		return nil, nil, err
	}
	c := &model.Classifier{Target: d.Target, Labels: d.Labels, Plan: plan, Network: res.Network}
	return &Fitted{Classifier: c, Result: res, Encoding: choice}, all, nil
}

// Encode fits the learner's plan on rows of d (0-based; nil means all),
// first choosing the numeric encoding when it is auto, and encodes every
// row of d with it: the patterns Train trains on, before any training.
// l.Fit.Workers bounds the goroutines of the choice (0:
// runtime.GOMAXPROCS(0)); l.Fit.Recorder hears none of its fits.
func (l Learner) Encode(ctx context.Context, d *tabular.Dataset, rows []int) (*encode.Plan, fit.Store, *EncodingChoice, error) {
	workers := l.Fit.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	return l.encode(ctx, d, rows, workers)
}

func (l Learner) encode(ctx context.Context, d *tabular.Dataset, rows []int, workers int) (*encode.Plan, fit.Store, *EncodingChoice, error) {
	var choice *EncodingChoice
	if l.Plan.Numeric.Method == encode.Auto {
		var err error
		if l.Plan.Numeric, choice, err = l.chooseNumeric(ctx, d, rows, workers); err != nil {
			return nil, nil, nil, err
		}
	}
	plan, err := encode.FitPlan(d.Features, rows, l.Plan)
	if err != nil {
		return nil, nil, nil, err
	}
	if err := model.CheckSize(len(d.Labels), len(d.Features), plan.Width()); err != nil {
		return nil, nil, nil, err
	}
	return plan, EncodeStore(plan, d), choice, nil
}

// encodeBlock is the rows EncodeStore encodes at a time.
const encodeBlock = 4096

// EncodeStore encodes every row of d with plan into the smallest store
// that trains to the same bits: packed 0/1 patterns (fit.BinaryPatterns),
// filled a block of rows at a time so that the dense patterns are never
// held whole, when every unit of every row is 0 or 1 (thermometer,
// one-hot, threshold, flag and categorical units); else dense patterns.
// It is the store a Learner trains on.
func EncodeStore(plan *encode.Plan, d *tabular.Dataset) fit.Store {
	n, width := d.Table.Rows, plan.Width()
	if packed, ok := fit.NewBinaryPatterns(width, n); ok && encodeBlocks(plan, d, packed.Append) {
		return packed
	}
	values, _ := plan.EncodeTo(nil, d.Features, nil)
	return fit.Patterns{Width: width, Values: values, Rows: n}
}

// encodeBlocks encodes the rows of d with plan a block at a time and
// hands each block to add, until add refuses one; it reports whether add
// took them all.
func encodeBlocks(plan *encode.Plan, d *tabular.Dataset, add func(fit.Patterns) bool) bool {
	var values []float64
	rows := make([]int, 0, encodeBlock)
	for from := 0; from < d.Table.Rows; from += encodeBlock {
		rows = rows[:0]
		for r := from; r < min(from+encodeBlock, d.Table.Rows); r++ {
			rows = append(rows, r)
		}
		values, _ = plan.EncodeTo(values, d.Features, rows)
		if !add(fit.Patterns{Width: plan.Width(), Values: values}) {
			return false
		}
	}
	return true
}

// classesOf returns the classes of the given rows of d.
func classesOf(d *tabular.Dataset, rows []int) []int {
	classes := make([]int, len(rows))
	for i, r := range rows {
		classes[i] = d.Classes[r]
	}
	return classes
}

func allRows(n int) []int {
	rows := make([]int, n)
	for i := range rows {
		rows[i] = i
	}
	return rows
}

// Fold is one round of a cross-validation.
type Fold struct {
	Train, Test []int // rows of the dataset, 0-based, ascending
	// Workers is the most goroutines the method may use, at least 1.
	Workers int
}

// Method predicts the classes of a fold's test rows after learning from
// its training rows. Predict should stop soon once ctx is done.
type Method struct {
	Name    string
	Predict func(ctx context.Context, f Fold) ([]int, error)
	// Score, when not nil, is used in place of Predict: it gives the
	// classes and the scores of the test rows (Predictions.Rows = f.Test),
	// and the result keeps them (CVResult.OutOfFold).
	Score func(ctx context.Context, f Fold) (*model.Predictions, error)
}

// predict runs the method on fold f: its classes of the test rows, and
// their predictions when it scores.
func (m Method) predict(ctx context.Context, f Fold) ([]int, *model.Predictions, error) {
	if m.Score == nil {
		predicted, err := m.Predict(ctx, f)
		return predicted, nil, err
	}
	p, err := m.Score(ctx, f)
	if err != nil {
		return nil, nil, err
	}
	if len(p.Rows) != len(f.Test) {
		return nil, nil, fmt.Errorf("%w: %d test rows, %d scored", ErrLengthMismatch, len(f.Test), len(p.Rows))
	}
	return p.Predicted, p, nil
}

// LearnerMethod cross-validates a Learner, whatever rule l.Fit names. Each
// fold encodes every row once with the plan fitted on its training rows,
// trains on a view of the training rows (fit.Subset) and predicts the test
// rows from the same store.
func LearnerMethod(name string, l Learner, d *tabular.Dataset) Method {
	score := func(ctx context.Context, f Fold) (*model.Predictions, error) {
		fitted, all, err := l.train(ctx, d, f.Train, f.Workers)
		if err != nil {
			return nil, err
		}
		p, err := fitted.Classifier.PredictPatterns(d.Table.Name, all, f.Test)
		if err != nil {
			return nil, err
		}
		if d.Table.RowNumbers != nil {
			p.RowNumbers = make([]int, len(p.Rows))
			for n, r := range p.Rows {
				p.RowNumbers[n] = d.Table.RowNumber(r)
			}
		}
		return p, nil
	}
	return Method{Name: name, Score: score, Predict: func(ctx context.Context, f Fold) ([]int, error) {
		p, err := score(ctx, f)
		if err != nil {
			return nil, err
		}
		return p.Predicted, nil
	}}
}

// MajorityMethod predicts the most frequent class of the training rows for
// every test row.
func MajorityMethod(d *tabular.Dataset) Method {
	return Method{Name: "majority", Predict: func(_ context.Context, f Fold) ([]int, error) {
		majority := Majority(classesOf(d, f.Train), len(d.Labels))
		predicted := make([]int, len(f.Test))
		for i := range predicted {
			predicted[i] = majority
		}
		return predicted, nil
	}}
}

// CVResult is the out-of-fold outcome of one method, over one or more
// repeats of a cross-validation.
type CVResult struct {
	Method string
	// Confusion pools the out-of-fold predictions of every fold of every
	// repeat: each row counts once per repeat.
	Confusion *Confusion
	// Pooled is the accuracy of Confusion: out-of-fold predictions that are
	// right over all predictions. It is the headline figure.
	Pooled float64
	// FoldAccuracy is the accuracy of each fold, repeat after repeat.
	FoldAccuracy []float64
	Mean, SD     float64 // of FoldAccuracy (sample sd)
	// RepeatAccuracy is the pooled accuracy of each repeat, and RepeatSD
	// its sample sd (0 for one repeat).
	RepeatAccuracy []float64
	RepeatSD       float64
	// OutOfFold holds the predictions of each fold's test rows, fold after
	// fold, repeat after repeat, for a method that scores (Method.Score);
	// it is nil otherwise.
	OutOfFold []FoldPredictions
}

// FoldPredictions are the predictions of one fold's test rows, made by the
// method trained on the other folds.
type FoldPredictions struct {
	Repeat int // from 0
	Fold   int // from 0, within the repeat
	*model.Predictions
}

// Scored pairs the out-of-fold predictions of every fold with the rows'
// true classes in d, in the order of OutOfFold.
func (r *CVResult) Scored(d *tabular.Dataset) (Scored, error) {
	s := Scored{Classes: len(d.Labels)}
	for _, f := range r.OutOfFold {
		fold, err := ScoredOf(f.Predictions, classesOf(d, f.Rows))
		if err == nil {
			err = s.Append(fold)
		}
		if err != nil {
			return Scored{}, fmt.Errorf("evaluate: %s, fold %d: %w", r.Method, f.Fold+1, err)
		}
	}
	return s, nil
}

// combine pools the results of the repeats of one method's
// cross-validation, in repeat order.
func combine(repeats []*CVResult) (*CVResult, error) {
	res := &CVResult{Method: repeats[0].Method, Confusion: NewConfusion(repeats[0].Confusion.Labels)}
	for k, r := range repeats {
		if err := res.Confusion.Merge(r.Confusion); err != nil {
			return nil, err
		}
		for _, f := range r.OutOfFold {
			f.Repeat = k
			res.OutOfFold = append(res.OutOfFold, f)
		}
		res.FoldAccuracy = append(res.FoldAccuracy, r.FoldAccuracy...)
		res.RepeatAccuracy = append(res.RepeatAccuracy, r.Pooled)
	}
	res.Pooled = res.Confusion.Accuracy()
	res.Mean, res.SD = MeanSD(res.FoldAccuracy)
	if len(repeats) > 1 {
		_, res.RepeatSD = MeanSD(res.RepeatAccuracy)
	}
	return res, nil
}

// CrossValidate is CrossValidateContext with a context that is never
// cancelled and runtime.GOMAXPROCS(0) workers.
func CrossValidate(d *tabular.Dataset, folds [][]int, m Method) (*CVResult, error) {
	return CrossValidateContext(context.Background(), d, folds, m, 0)
}

// CrossValidateContext trains on all folds but one and predicts the
// held-out fold, for each fold in turn, and pools the predictions.
//
// It divides workers goroutines (0 means runtime.GOMAXPROCS(0)) between
// the folds and the work within each: up to workers folds run at once, so
// m.Predict must be safe for concurrent use, and each gets an equal share
// of what is left (Fold.Workers), so that no more than workers goroutines
// are busy. The result does not depend on the schedule or the count.
//
// Once ctx is done no further fold is started, and it returns
// an error wrapping ctx.Err().
func CrossValidateContext(ctx context.Context, d *tabular.Dataset, folds [][]int, m Method, workers int) (*CVResult, error) {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	type outcome struct {
		confusion   *Confusion
		predictions *model.Predictions
		err         error
	}
	outcomes := make([]outcome, len(folds))
	next := make(chan int)
	var wg sync.WaitGroup
	concurrent := min(workers, len(folds))
	for range concurrent {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range next {
				if ctx.Err() != nil {
					continue // handed out as ctx was done: not started
				}
				test := folds[k]
				predicted, predictions, err := m.predict(ctx, Fold{Train: TrainRows(folds, k), Test: test, Workers: workers / concurrent})
				fold := NewConfusion(d.Labels)
				if err == nil {
					// AddAll, not Add: a Method that returns too few
					// predictions or a bad class is an error here, not a
					// panic that no caller could recover from.
					err = fold.AddAll(classesOf(d, test), predicted)
				}
				if err != nil {
					outcomes[k].err = fmt.Errorf("evaluate: %s, fold %d of %d: %w", m.Name, k+1, len(folds), err)
					continue
				}
				outcomes[k].confusion, outcomes[k].predictions = fold, predictions
			}
		}()
	}
hand:
	for k := range folds {
		select {
		case next <- k:
		case <-ctx.Done():
			break hand
		}
	}
	close(next)
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("evaluate: %s: cross-validation stopped: %w", m.Name, err)
	}

	res := &CVResult{Method: m.Name, Confusion: NewConfusion(d.Labels)}
	for k, o := range outcomes {
		if o.err != nil {
			return nil, o.err
		}
		if err := res.Confusion.Merge(o.confusion); err != nil {
			return nil, err
		}
		res.FoldAccuracy = append(res.FoldAccuracy, o.confusion.Accuracy())
		if o.predictions != nil {
			res.OutOfFold = append(res.OutOfFold, FoldPredictions{Fold: k, Predictions: o.predictions})
		}
	}
	res.Mean, res.SD = MeanSD(res.FoldAccuracy)
	res.Pooled = res.Confusion.Accuracy()
	res.RepeatAccuracy = []float64{res.Pooled}
	return res, nil
}

// Folds makes the stratified folds of d for one repeat of a
// cross-validation (see StratifiedFoldsRepeat).
func Folds(d *tabular.Dataset, k int, seed, repeat uint64) ([][]int, error) {
	return StratifiedFoldsRepeat(d.Classes, len(d.Labels), k, seed, repeat)
}

// SmallClassesOf returns the classes of d with fewer rows than k folds,
// named by their labels.
func SmallClassesOf(d *tabular.Dataset, k int) []SmallClass {
	small := SmallClasses(d.Classes, len(d.Labels), k)
	for i := range small {
		small[i].Name = d.Labels[small[i].Label]
	}
	return small
}
