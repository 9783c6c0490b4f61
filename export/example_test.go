package export_test

import (
	"os"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/internal/refdata"
)

// A model's predictions go out as CSV: row number, label, one score per class.
func ExampleWritePredictionsCSV() {
	// The AND truth table, each 0/1 input one unit, fitted with a fixed seed.
	d, err := refdata.Dataset("and.csv", "y")
	if err != nil {
		panic(err)
	}
	cut := 0.5
	learner := evaluate.Learner{
		Plan: encode.Options{Numeric: encode.Encoding{Method: encode.Threshold, Cut: &cut}},
		Fit:  fit.Options{Seed: 1, Epochs: 2000, KeepGoing: true},
	}
	fitted, err := learner.Train(d, nil)
	if err != nil {
		panic(err)
	}
	p, _, err := fitted.Classifier.PredictTable(d.Table)
	if err != nil {
		panic(err)
	}
	if err := export.WritePredictionsCSV(os.Stdout, p); err != nil {
		panic(err)
	}
	// Output:
	// row,predicted,score_0,score_1
	// 1,0,0.999997,2.99927e-06
	// 2,0,0.987278,0.0127224
	// 3,0,0.987275,0.0127253
	// 4,1,0.0177372,0.982263
}
