package encode_test

import (
	"fmt"
	"strings"

	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// ExampleFitPlan fits a thermometer encoding on the training rows and
// encodes every row, including one with a colour the plan never saw.
func ExampleFitPlan() {
	text := "size,colour,label\n1,red,a\n2,green,a\n3,red,b\n4,red,b\n5,blue,b\n"
	tab, err := ingest.ReadTable("fruit.csv", strings.NewReader(text), ingest.ReadOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	d, err := tabular.NewDataset(tab, "label", nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	numeric, _ := encode.ParseNumericEncoding("thermometer:2")
	train := []int{0, 1, 2, 3} // rows 1–4; row 5 is held out
	plan, err := encode.FitPlan(d.Features, train, encode.Options{Numeric: numeric})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(strings.Join(plan.UnitNames(), " | "))
	patterns, stats := plan.EncodeTo(nil, d.Features, nil)
	for r := range tab.Rows {
		fmt.Println(d.Labels[d.Classes[r]], patterns[r*plan.Width():(r+1)*plan.Width()])
	}
	fmt.Println("other:", stats.Other)
	// Output:
	// size>2.5 | colour=green | colour=red | colour=(other)
	// a [0 0 1 0]
	// a [0 1 0 0]
	// b [1 0 1 0]
	// b [1 0 1 0]
	// b [1 0 0 1]
	// other: map[colour:{1 5}]
}
