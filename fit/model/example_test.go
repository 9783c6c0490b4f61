package model_test

import (
	"fmt"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/internal/refdata"
)

// A classifier fitted on Iris scores rows of a table through its plan.
func ExampleClassifier_Predict() {
	d, err := refdata.Iris()
	if err != nil {
		panic(err)
	}
	fitted, err := evaluate.Learner{Fit: fit.Options{Seed: 1}}.Train(d, nil)
	if err != nil {
		panic(err)
	}
	p, _, err := fitted.Classifier.Predict(d.Table.Name, d.Features, []int{0, 50, 100})
	if err != nil {
		panic(err)
	}
	for n := range p.Len() {
		fmt.Printf("row %d: %s\n", p.Rows[n]+1, p.Labels[p.Predicted[n]])
	}
	// Output:
	// row 1: setosa
	// row 51: versicolor
	// row 101: virginica
}
