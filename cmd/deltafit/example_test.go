package main

import (
	"context"
	"fmt"
	"os"
	"strings"
)

// The XOR truth table is not linearly separable, so the check gate fails
// with exit status 3 and one line on stderr (here sent to stdout).
func Example_checkGate() {
	xor := "x1,x2,y\n0,0,0\n0,1,1\n1,0,1\n1,1,0\n" // as testdata/xor.csv
	var report strings.Builder
	code := run(context.Background(), []string{"check", "-", "--target", "y", "--require", "separable", "--format", "json"},
		strings.NewReader(xor), &report, os.Stdout)
	fmt.Println("exit status", code)
	// Output:
	// deltafit: --require separable: 1 against 0 (not separable)
	// exit status 3
}
