package export_test

import (
	"os"

	"deltafit/export"
	"deltafit/fit"
)

// A model's predictions go out as CSV: row number, label, one score per class.
func ExampleWritePredictionsCSV() {
	// The AND truth table with 0/1 inputs, fitted with a fixed seed.
	inputs := fit.Patterns{Width: 2, Values: []float64{0, 0, 0, 1, 1, 0, 1, 1}}
	res, err := fit.Train(inputs, []int{0, 0, 0, 1}, 2, fit.Options{Seed: 1, Epochs: 2000, KeepGoing: true})
	if err != nil {
		panic(err)
	}
	p := &export.Predictions{Labels: []string{"false", "true"}}
	for i := 0; i < inputs.Len(); i++ {
		p.Predicted = append(p.Predicted, res.Network.Classify(inputs.Row(i)))
		p.Scores = append(p.Scores, res.Network.ScoresTo(nil, inputs.Row(i)))
	}
	if err := export.WritePredictionsCSV(os.Stdout, p); err != nil {
		panic(err)
	}
	// Output:
	// row,predicted,score_false,score_true
	// 1,false,0.999999,1.46171e-06
	// 2,false,0.989963,0.0100373
	// 3,false,0.989962,0.0100383
	// 4,true,0.0140182,0.985982
}
