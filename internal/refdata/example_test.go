package refdata_test

import (
	"fmt"

	"deltafit/internal/refdata"
)

func ExampleDataset() {
	d, err := refdata.Dataset("xor.csv", "y")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(d.Labels, d.Classes, len(d.Features), "features")
	// Output: [0 1] [0 1 1 0] 2 features
}
