package fit_test

import (
	"fmt"

	"deltafit/fit"
)

// Learning the AND truth table with the delta rule and logistic units.
func Example() {
	and := fit.Patterns{Width: 2, Values: []float64{
		0, 0,
		0, 1,
		1, 0,
		1, 1,
	}}
	classes := []int{0, 0, 0, 1}
	result, err := fit.Train(and, classes, 2, fit.Options{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	for i := range and.Len() {
		x := and.Row(i)
		fmt.Printf("%v AND %v -> %d\n", x[0], x[1], result.Network.Classify(x))
	}
	fmt.Println("stop:", result.Stop)
	// Output:
	// 0 AND 0 -> 0
	// 0 AND 1 -> 0
	// 1 AND 0 -> 0
	// 1 AND 1 -> 1
	// stop: zero-errors
}

// A network with one unit decides by comparing its output with the
// midpoint of the rule's targets.
func ExampleNetwork_ScoresTo() {
	net := &fit.Network{Rule: "delta", Unit: fit.Linear, Inputs: 1, Classes: 2, On: 1, Off: 0,
		Weights: [][]float64{{1}}, Biases: []float64{0}}
	for _, x := range []float64{0.25, 0.75} {
		scores := net.ScoresTo(nil, []float64{x})
		fmt.Printf("x=%v scores=%v class=%d\n", x, scores, net.Classify([]float64{x}))
	}
	// Output:
	// x=0.25 scores=[0.75 0.25] class=0
	// x=0.75 scores=[0.25 0.75] class=1
}
