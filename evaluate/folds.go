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

// SmallClass is a class with rows but fewer than the folds asked for: it
// appears in the test rows of only Count folds, and the training rows of a
// fold miss it when the fold holds all its rows. Cross-validation still
// runs (common practice); callers report it.
type SmallClass struct {
	Label int    // class index
	Name  string // class label, when the caller knows it ("" prints the index)
	Count int    // rows of that class
	Folds int    // folds asked for
}

func (c SmallClass) String() string {
	label := c.Name
	if label == "" {
		label = fmt.Sprint(c.Label)
	} else {
		label = strconv.Quote(label)
	}
	rows, folds := "rows", "folds"
	if c.Count == 1 {
		rows, folds = "row", "fold"
	}
	return fmt.Sprintf("class %s has %d %s, fewer than the %d folds: it is tested in %d %s only, and some training folds lack it",
		label, c.Count, rows, c.Folds, c.Count, folds)
}

// SmallClasses returns the classes with rows but fewer than k, in class
// order.
func SmallClasses(classes []int, numClasses, k int) []SmallClass {
	counts := make([]int, max(numClasses, 0))
	for _, c := range classes {
		if c >= 0 && c < numClasses {
			counts[c]++
		}
	}
	var small []SmallClass
	for class, n := range counts {
		if n > 0 && n < k {
			small = append(small, SmallClass{Label: class, Count: n, Folds: k})
		}
	}
	return small
}

// StratifiedFolds splits the rows 0..len(classes)-1 into k test folds,
// each sorted ascending. classes[i] is the class of row i, in
// [0, numClasses). It is StratifiedFoldsRepeat with repeat 0.
func StratifiedFolds(classes []int, numClasses, k int, seed uint64) ([][]int, error) {
	return StratifiedFoldsRepeat(classes, numClasses, k, seed, 0)
}

// StratifiedFoldsRepeat splits the rows as StratifiedFolds does for the
// given repeat of a repeated cross-validation.
//
// The rows of each class, in ascending class order, are shuffled with a PCG
// generator seeded with (seed, repeat) and dealt round-robin to the folds;
// each class starts at the fold after the one where the previous class
// stopped. So every row is in exactly one fold, per class the folds' counts
// differ by at most one, and the fold sizes differ by at most one. A class
// with fewer rows than k is in fewer folds (see SmallClasses).
//
// It returns an error wrapping ErrFoldCount if k < 2 or k > len(classes),
// and one wrapping ErrClassOutOfRange for a bad class.
func StratifiedFoldsRepeat(classes []int, numClasses, k int, seed, repeat uint64) ([][]int, error) {
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

	rng := rand.New(rand.NewPCG(seed, repeat))
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
