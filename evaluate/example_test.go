package evaluate_test

import (
	"fmt"

	"deltafit/evaluate"
)

// Two readers' verdicts on 50 cases: they agree on 20 "yes" and 15 "no".
func ExampleConfusion() {
	c := evaluate.NewConfusion([]string{"yes", "no"})
	counts := [][]int{{20, 5}, {10, 15}} // rows: first reader, columns: second
	for truth, row := range counts {
		for predicted, n := range row {
			for range n {
				c.Add(truth, predicted)
			}
		}
	}
	fmt.Printf("rows %d, accuracy %.2f, kappa %.2f\n", c.Total(), c.Accuracy(), c.Kappa())
	for _, m := range c.PerClass() {
		fmt.Printf("%-3s precision %.3f recall %.3f f1 %.3f\n", m.Label, m.Precision, m.Recall, m.F1)
	}
	// Output:
	// rows 50, accuracy 0.70, kappa 0.40
	// yes precision 0.667 recall 0.800 f1 0.727
	// no  precision 0.750 recall 0.600 f1 0.667
}

// Ten rows, four of class 0 and six of class 1, split into three folds.
func ExampleStratifiedFolds() {
	classes := []int{0, 1, 1, 0, 1, 1, 0, 1, 1, 0}
	folds, err := evaluate.StratifiedFolds(classes, 2, 3, 42)
	if err != nil {
		fmt.Println(err)
		return
	}
	for k, fold := range folds {
		perClass := [2]int{}
		for _, row := range fold {
			perClass[classes[row]]++
		}
		fmt.Printf("fold %d: %d test rows %v, %d training rows\n",
			k, len(fold), perClass, len(evaluate.TrainRows(folds, k)))
	}

	// Five folds: class 0 has four rows, so one fold tests none of them.
	for _, c := range evaluate.SmallClasses(classes, 2, 5) {
		fmt.Println(c)
	}
	// Output:
	// fold 0: 4 test rows [2 2], 6 training rows
	// fold 1: 3 test rows [1 2], 7 training rows
	// fold 2: 3 test rows [1 2], 7 training rows
	// class 0 has 4 rows, fewer than the 5 folds: it is tested in 4 folds only, and some training folds lack it
}

func ExampleConfusion_Matthews() {
	c := evaluate.NewConfusion([]string{"no", "yes"})
	_ = c.AddAll([]int{0, 0, 0, 1, 1, 1, 1, 0}, []int{0, 0, 1, 1, 1, 1, 0, 0})
	interval := c.AccuracyInterval()
	fmt.Printf("accuracy %.3f, 95%% interval [%.3f, %.3f], MCC %.3f\n", c.Accuracy(), interval.Low, interval.High, c.Matthews())
	// Output:
	// accuracy 0.750, 95% interval [0.409, 0.929], MCC 0.500
}
