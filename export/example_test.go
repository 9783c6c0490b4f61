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
	// 1,0,0.9999970007327356,2.9992672644917967e-06
	// 2,0,0.9872775767644607,0.01272242323553927
	// 3,0,0.9872747172821446,0.01272528271785543
	// 4,1,0.017737164444634357,0.9822628355553656
}
