package evaluate

import (
	"errors"
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

// Fitted is a classifier and the training result behind its network.
type Fitted struct {
	Classifier *model.Classifier
	Result     *fit.Result
}

// Train fits the plan on rows of d (0-based; nil means all) and trains the
// network on the encoded rows.
func (l Learner) Train(d *tabular.Dataset, rows []int) (*Fitted, error) {
	if rows == nil {
		rows = allRows(d.Table.Rows)
	}
	plan, err := encode.FitPlan(d.Features, rows, l.Plan)
	if err != nil {
		return nil, err
	}
	values, _ := plan.EncodeTo(nil, d.Features, rows)
	res, err := fit.Train(fit.Patterns{Width: plan.Width(), Values: values}, classesOf(d, rows), len(d.Labels), l.Fit)
	if err != nil {
		return nil, err
	}
	c := &model.Classifier{Target: d.Target, Labels: d.Labels, Plan: plan, Network: res.Network}
	return &Fitted{Classifier: c, Result: res}, nil
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

// Method predicts the classes of test rows after learning from train rows.
type Method struct {
	Name    string
	Predict func(train, test []int) ([]int, error)
}

// LearnerMethod cross-validates a Learner, whatever rule l.Fit names.
func LearnerMethod(name string, l Learner, d *tabular.Dataset) Method {
	return Method{Name: name, Predict: func(train, test []int) ([]int, error) {
		fitted, err := l.Train(d, train)
		if err != nil {
			return nil, err
		}
		p, _, err := fitted.Classifier.Predict(d.Table.Name, d.Features, test)
		if err != nil {
			return nil, err
		}
		return p.Predicted, nil
	}}
}

// MajorityMethod predicts the most frequent class of the training rows for
// every test row.
func MajorityMethod(d *tabular.Dataset) Method {
	return Method{Name: "majority", Predict: func(train, test []int) ([]int, error) {
		majority := Majority(classesOf(d, train), len(d.Labels))
		predicted := make([]int, len(test))
		for i := range predicted {
			predicted[i] = majority
		}
		return predicted, nil
	}}
}

// CVResult is the out-of-fold outcome of one method.
type CVResult struct {
	Method       string
	Confusion    *Confusion // out-of-fold predictions of every fold, pooled
	FoldAccuracy []float64
	Mean, SD     float64 // of FoldAccuracy (sample sd)
}

// CrossValidate trains on all folds but one and predicts the held-out
// fold, for each fold in turn, and pools the predictions. Folds run in
// parallel on up to GOMAXPROCS goroutines, so m.Predict must be safe for
// concurrent use; the result does not depend on the schedule.
func CrossValidate(d *tabular.Dataset, folds [][]int, m Method) (*CVResult, error) {
	type outcome struct {
		confusion *Confusion
		err       error
	}
	outcomes := make([]outcome, len(folds))
	next := make(chan int)
	var wg sync.WaitGroup
	for w := 0; w < min(runtime.GOMAXPROCS(0), len(folds)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range next {
				test := folds[k]
				predicted, err := m.Predict(TrainRows(folds, k), test)
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
				outcomes[k].confusion = fold
			}
		}()
	}
	for k := range folds {
		next <- k
	}
	close(next)
	wg.Wait()

	res := &CVResult{Method: m.Name, Confusion: NewConfusion(d.Labels)}
	for _, o := range outcomes {
		if o.err != nil {
			return nil, o.err
		}
		if err := res.Confusion.Merge(o.confusion); err != nil {
			return nil, err
		}
		res.FoldAccuracy = append(res.FoldAccuracy, o.confusion.Accuracy())
	}
	res.Mean, res.SD = MeanSD(res.FoldAccuracy)
	return res, nil
}

// Folds makes stratified folds of d; a *FoldError names the class label.
func Folds(d *tabular.Dataset, k int, seed uint64) ([][]int, error) {
	folds, err := StratifiedFolds(d.Classes, len(d.Labels), k, seed)
	var fe *FoldError
	if errors.As(err, &fe) {
		fe.Name = d.Labels[fe.Label]
	}
	return folds, err
}
