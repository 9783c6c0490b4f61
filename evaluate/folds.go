package evaluate

import (
	"errors"
	"fmt"
	"math/rand/v2"
	"slices"
	"strconv"
)

// ErrFoldCount means the number of folds is below 2 or above the number of
// rows.
var ErrFoldCount = errors.New("evaluate: bad number of folds")

// FoldError reports a class with fewer rows than folds, so some test fold
// would hold none of it.
type FoldError struct {
	Label int    // class index
	Name  string // class label, when the caller knows it ("" prints the index)
	Count int    // rows of that class
	Folds int    // folds asked for
}

func (e *FoldError) Error() string {
	label := e.Name
	if label == "" {
		label = fmt.Sprint(e.Label)
	} else {
		label = strconv.Quote(label)
	}
	rows := "rows"
	if e.Count == 1 {
		rows = "row"
	}
	return fmt.Sprintf("evaluate: class %s has %d %s; %d folds need at least %d in every class (use fewer folds)",
		label, e.Count, rows, e.Folds, e.Folds)
}

// StratifiedFolds splits the rows 0..len(classes)-1 into k test folds,
// each sorted ascending. classes[i] is the class of row i, in
// [0, numClasses).
//
// The rows of each class, in ascending class order, are shuffled with a PCG
// generator seeded with (seed, 0) and dealt round-robin to the folds; each
// class starts at the fold after the one where the previous class stopped.
// So every row is in exactly one fold, per class the folds' counts differ by
// at most one, and the fold sizes differ by at most one.
//
// It returns an error wrapping ErrFoldCount if k < 2 or k > len(classes),
// one wrapping ErrClassOutOfRange for a bad class, and a *FoldError for the
// lowest class that has rows but fewer than k. Classes with no rows are
// ignored.
func StratifiedFolds(classes []int, numClasses, k int, seed uint64) ([][]int, error) {
	if k < 2 {
		return nil, fmt.Errorf("%w: %d folds; need at least 2", ErrFoldCount, k)
	}
	if k > len(classes) {
		return nil, fmt.Errorf("%w: %d folds for %d rows", ErrFoldCount, k, len(classes))
	}
	byClass := make([][]int, max(numClasses, 0))
	for row, class := range classes {
		if class < 0 || class >= numClasses {
			return nil, fmt.Errorf("evaluate: row %d: %w: class %d outside [0, %d)", row, ErrClassOutOfRange, class, numClasses)
		}
		byClass[class] = append(byClass[class], row)
	}
	for class, rows := range byClass {
		if len(rows) > 0 && len(rows) < k {
			return nil, &FoldError{Label: class, Count: len(rows), Folds: k}
		}
	}

	rng := rand.New(rand.NewPCG(seed, 0))
	folds := make([][]int, k)
	dealt := 0
	for _, rows := range byClass {
		rng.Shuffle(len(rows), func(i, j int) { rows[i], rows[j] = rows[j], rows[i] })
		for _, row := range rows {
			fold := dealt % k
			folds[fold] = append(folds[fold], row)
			dealt++
		}
	}
	for _, fold := range folds {
		slices.Sort(fold)
	}
	return folds, nil
}

// TrainRows returns every row that is not in folds[k], ascending: the
// training rows when fold k is the test set. It panics if k is outside
// [0, len(folds)).
func TrainRows(folds [][]int, k int) []int {
	if k < 0 || k >= len(folds) {
		panic(fmt.Sprintf("evaluate: TrainRows: fold %d outside [0, %d)", k, len(folds)))
	}
	var rows []int
	for i, fold := range folds {
		if i != k {
			rows = append(rows, fold...)
		}
	}
	slices.Sort(rows)
	return rows
}
