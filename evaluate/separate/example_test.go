package separate_test

import (
	"context"
	"fmt"

	"deltafit/evaluate/separate"
)

// The exclusive-or of two inputs: the rows where exactly one input is on
// (rows 2 and 3) against the others (rows 1 and 4).
func ExampleSeparate() {
	xor := separate.Points{Width: 2, Values: []float64{
		0, 0,
		0, 1,
		1, 0,
		1, 1,
	}}
	res, err := separate.Separate(context.Background(), xor, []int{1, 2}, []int{0, 3}, separate.Options{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(res.Verdict)
	c := res.Certificate
	for i, row := range c.Rows {
		fmt.Printf("row %d positive=%v weight %.2f\n", row, c.Positive[i], c.Weights[i])
	}
	fmt.Printf("residual %.1g\n", c.Residual)
	// Output:
	// not separable
	// row 2 positive=true weight 0.50
	// row 3 positive=true weight 0.50
	// row 1 positive=false weight 0.50
	// row 4 positive=false weight 0.50
	// residual 0
}

// The conjunction of two inputs is separable; the witness is checked on
// every row before it is returned.
func ExampleSeparate_witness() {
	and := separate.Points{Width: 2, Values: []float64{0, 0, 0, 1, 1, 0, 1, 1}}
	res, err := separate.Separate(context.Background(), and, []int{3}, []int{0, 1, 2}, separate.Options{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	w := res.Witness
	fmt.Println(res.Verdict, w.Rows, "rows checked")
	fmt.Printf("weights %.2f bias %.2f margin %.3f\n", w.Weights, w.Bias, w.Margin)
	// Output:
	// separable 4 rows checked
	// weights [2.00 2.00] bias -3.00 margin 0.354
}
