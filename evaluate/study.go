package evaluate

import (
	"context"
	"errors"
	"fmt"
	"runtime"
	"sync"

	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/ingest/tabular"
)

// Study is a fit on all rows and, when folds are asked for, the
// cross-validation of the same learner beside its baselines on the same
// folds.
type Study struct {
	Fitted   *Fitted
	Main     *CVResult // the learner itself; nil without folds
	Majority *CVResult // the majority class of each training fold
	Hebbian  *CVResult // HebbianBaseline of the learner
	// SmallClasses are the classes with fewer rows than folds, which
	// cross-validation tests in fewer folds.
	SmallClasses []SmallClass
}

// StudyOptions say how a study cross-validates.
type StudyOptions struct {
	Folds   int    // stratified folds; 0 means no cross-validation
	Repeats int    // repeats of the cross-validation, each with its own folds; 0 means 1
	Seed    uint64 // seeds the folds of every repeat (see StratifiedFoldsRepeat)
	// Progress, if not nil, is told after each fold of each method's
	// cross-validation how many of how many folds are done. It is called
	// from the goroutines that run the folds, one call at a time.
	Progress func(done, total int)
}

// RunStudy fits l on every row of d and, when opts.Folds > 0,
// cross-validates it with stratified folds beside the majority-class and
// Hebbian baselines on the same folds. The folds are made, and checked,
// before anything is fitted. l.Fit.Workers (0: runtime.GOMAXPROCS(0), read
// once here) bounds the goroutines of each step. Work stops soon after ctx
// is done. Data errors name the dataset's file.
func RunStudy(ctx context.Context, d *tabular.Dataset, l Learner, opts StudyOptions) (*Study, error) {
	if l.Fit.Workers == 0 {
		l.Fit.Workers = runtime.GOMAXPROCS(0)
	}
	if err := model.CheckSize(len(d.Labels), len(d.Features), 0); err != nil {
		return nil, fmt.Errorf("%s: %w", tabular.DisplayName(d.Table.Name), err)
	}
	repeats := max(1, opts.Repeats)
	var splits [][][]int
	if opts.Folds > 0 {
		for r := range repeats {
			split, err := Folds(d, opts.Folds, opts.Seed, uint64(r))
			if err != nil {
				return nil, fmt.Errorf("%s: %w", tabular.DisplayName(d.Table.Name), err)
			}
			splits = append(splits, split)
		}
	}
	fitted, _, err := l.train(ctx, d, nil, l.Fit.Workers)
	if err != nil {
		return nil, inFile(err, d.Table.Name)
	}
	s := &Study{Fitted: fitted}
	if opts.Folds == 0 {
		return s, nil
	}
	s.SmallClasses = SmallClassesOf(d, opts.Folds)
	counter := &foldCounter{total: 3 * len(splits) * opts.Folds, progress: opts.Progress}
	for _, run := range []struct {
		dst *(*CVResult)
		m   Method
	}{
		{&s.Main, LearnerMethod(ruleName(l.Fit), l, d)},
		{&s.Majority, MajorityMethod(d)},
		{&s.Hebbian, LearnerMethod("hebbian", HebbianBaseline(l), d)},
	} {
		results := make([]*CVResult, len(splits))
		m := counter.count(run.m)
		for r, split := range splits {
			if results[r], err = CrossValidateContext(ctx, d, split, m, l.Fit.Workers); err != nil {
				return nil, inFile(err, d.Table.Name)
			}
		}
		if *run.dst, err = combine(results); err != nil {
			return nil, err
		}
	}
	return s, nil
}

// foldCounter counts the folds of a study's cross-validations for
// StudyOptions.Progress.
type foldCounter struct {
	mu          sync.Mutex
	done, total int
	progress    func(done, total int)
}

// count returns m, telling the counter's progress after each fold.
func (c *foldCounter) count(m Method) Method {
	if c.progress == nil {
		return m
	}
	tell := func() {
		c.mu.Lock()
		defer c.mu.Unlock()
		c.done++
		c.progress(c.done, c.total)
	}
	if predict := m.Predict; predict != nil {
		m.Predict = func(ctx context.Context, f Fold) ([]int, error) {
			defer tell()
			return predict(ctx, f)
		}
	}
	if score := m.Score; score != nil {
		m.Score = func(ctx context.Context, f Fold) (*model.Predictions, error) {
			defer tell()
			return score(ctx, f)
		}
	}
	return m
}

// HebbianBaseline is the contrast baseline of a learner: the same encoding
// with the Hebbian rule (one pass, see fit.OnePass) at its automatic rate.
func HebbianBaseline(l Learner) Learner {
	l.Fit.Rule, l.Fit.Rate = fit.Hebbian{}, 0
	return l
}

func ruleName(o fit.Options) string {
	if o.Rule == nil {
		return fit.Delta{}.Name()
	}
	return o.Rule.Name()
}

// inFile names the data file in a data error raised by code that works on
// columns and does not know the file (the encoding plan's caps).
func inFile(err error, name string) error {
	var de *tabular.DataError
	if errors.As(err, &de) && de.File == "" {
		de.File = name
	}
	return err
}
