package ingest_test

import (
	"fmt"
	"strings"

	"deltafit/ingest"
)

// ExampleReadTable reads a small CSV; kinds are inferred from the values
// and NA marks a missing cell.
func ExampleReadTable() {
	text := "size,colour,ripe\n1.5,red,true\nNA,green,false\n3,red,true\n"
	tab, err := ingest.ReadTable("fruit.csv", strings.NewReader(text), ingest.ReadOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, col := range tab.Columns {
		fmt.Printf("%s: %s, %d missing, row 2 = %q\n", col.Name, col.Kind, col.MissingCount(), col.Value(1))
	}
	// Output:
	// size: numeric, 1 missing, row 2 = ""
	// colour: categorical, 0 missing, row 2 = "green"
	// ripe: boolean, 0 missing, row 2 = "false"
}

// ExampleReadTable_error shows the position a data error carries.
func ExampleReadTable_error() {
	text := "size,colour\n1.5,red\nbig,green\n3,red\n"
	_, err := ingest.ReadTable("fruit.csv", strings.NewReader(text), ingest.ReadOptions{})
	fmt.Println(err)
	// Output:
	// fruit.csv: row 2, column 1 (size): "big" is not a number, though 2 of the column's 3 values are; fix the cell, leave it empty or write NA if it is missing, or declare the column categorical
}
