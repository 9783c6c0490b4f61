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

// trace prints each epoch and the first updates of the first epoch.
type trace struct{ shown int }

func (r *trace) RecordEpoch(s fit.EpochStats) error {
	fmt.Printf("epoch %d: loss %.4f, %d errors\n", s.Epoch, s.Loss, s.Errors)
	return nil
}

func (r *trace) RecordUpdate(u *fit.Update) {
	if r.shown < 3 {
		r.shown++
		fmt.Printf("  row %d class %d: target %v output %.4f step %+.4f\n", u.Row, u.Class, u.Targets[0], u.Outputs[0], u.Steps[0])
	}
}

// A recorder that implements RecordUpdate sees every change to the
// weights: for the single unit here, Δw = step · x and Δb = step, with
// step = rate · (target − output). By hand from zero weights: row 1 (0,1)
// has output 0, step 0.25; row 2 (1,0) then has output b = 0.25, step
// 0.25·0.75; row 3 (1,1) has output 0.1875 + 0.25 + 0.4375 = 0.875.
func ExampleUpdateRecorder() {
	or := fit.Patterns{Width: 2, Values: []float64{
		0, 0,
		0, 1,
		1, 0,
		1, 1,
	}}
	classes := []int{0, 1, 1, 1}
	result, err := fit.Train(or, classes, 2, fit.Options{Seed: 1, Unit: fit.Linear, Rate: 0.25, Epochs: 3, Recorder: &trace{}})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("stop:", result.Stop)
	// Output:
	//   row 1 class 1: target 1 output 0.0000 step +0.2500
	//   row 2 class 1: target 1 output 0.2500 step +0.1875
	//   row 3 class 1: target 1 output 0.8750 step +0.0312
	// epoch 1: loss 0.1321, 0 errors
	// stop: zero-errors
}
