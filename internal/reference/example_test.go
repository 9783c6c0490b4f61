package reference_test

import (
	"fmt"

	"deltafit/internal/reference"
)

func ExampleRun() {
	cases, err := reference.Run()
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, c := range cases {
		if !c.Pass {
			fmt.Printf("%s (%s): expected %s, got %s\n", c.Name, c.Source, c.Expected, c.Got)
		}
	}
	fmt.Println("every case passed")
	// Output: every case passed
}
