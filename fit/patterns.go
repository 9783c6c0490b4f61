package fit

import (
	"fmt"
	"math"
)

// Patterns is the dense Store: a row-major matrix of encoded input
// patterns, Width inputs per row. Nothing in this package modifies Values.
type Patterns struct {
	// Width is the number of inputs of each pattern. It may be 0: such
	// patterns feed only the bias.
	Width int
	// Values holds the patterns one after another, Len()·Width values.
	Values []float64
	// Rows is the number of patterns when Width is 0 (bias-only patterns
	// hold no values). It is ignored when Width > 0, and Train also accepts
	// it unset, taking the count from the labels.
	Rows int
}

// Len returns the number of patterns.
func (p Patterns) Len() int {
	if p.Width <= 0 {
		return p.Rows
	}
	return len(p.Values) / p.Width
}

// Inputs returns Width.
func (p Patterns) Inputs() int { return p.Width }

// Row returns pattern i. The slice aliases Values and must not be
// modified; its capacity ends with the row. It panics if i is out of range.
func (p Patterns) Row(i int) []float64 {
	start, end := i*p.Width, (i+1)*p.Width
	return p.Values[start:end:end]
}

// RowTo returns Row(i), a view of Values; dst is not used.
func (p Patterns) RowTo(_ []float64, i int) []float64 { return p.Row(i) }

// touchRow reads one value of every 64-byte cache line of pattern i.
func (p Patterns) touchRow(i int) uint64 {
	var x uint64
	row := p.Row(i)
	for k := 0; k < len(row); k += 8 {
		x ^= math.Float64bits(row[k])
	}
	return x
}

// check reports whether p is well formed and holds exactly rows patterns
// of finite values.
func (p Patterns) check(rows int) error {
	switch {
	case p.Width < 0:
		return fmt.Errorf("fit: negative pattern width %d", p.Width)
	case p.Width == 0 && len(p.Values) != 0:
		return fmt.Errorf("fit: patterns of width 0 hold %d values", len(p.Values))
	case p.Width == 0 && p.Rows != 0 && p.Rows != rows:
		return fmt.Errorf("fit: %d patterns but %d class labels", p.Rows, rows)
	case p.Width > 0 && len(p.Values)%p.Width != 0:
		return fmt.Errorf("fit: %d values do not make whole patterns of width %d", len(p.Values), p.Width)
	case p.Width > 0 && len(p.Values)/p.Width != rows:
		return fmt.Errorf("fit: %d patterns but %d class labels", len(p.Values)/p.Width, rows)
	}
	for k, v := range p.Values {
		if !finite(v) {
			return fmt.Errorf("fit: pattern %d input %d is not finite (%v)", k/p.Width, k%p.Width, v)
		}
	}
	return nil
}
