package demo_test

import (
	"bytes"
	"fmt"

	"deltafit/internal/demo"
)

// The same seed writes the same bytes; the first line is the header.
func ExampleGenerate() {
	table := demo.Generate(demo.Seed, 5)
	header, _, _ := bytes.Cut(table, []byte("\n"))
	fmt.Println(string(header))
	fmt.Println(bytes.Count(table, []byte("\n"))-1, "rows")
	fmt.Println(bytes.Equal(table, demo.Generate(demo.Seed, 5)))
	// Output:
	// piece_id,clay_body,glaze_coat,peak_temp_c,ramp_c_per_hour,hold_min,wall_mm,humidity_pct,outcome
	// 5 rows
	// true
}
