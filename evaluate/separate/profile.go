package separate

import (
	"math"
	"slices"

	"deltafit/ingest"
)

// Profile describes a dataset before any model sees it.
type Profile struct {
	Rows    int          `json:"rows"`
	Classes []ClassCount `json:"classes"`
	// Imbalance is the largest class count over the smallest.
	Imbalance float64 `json:"imbalance_ratio"`
	// Constant lists feature columns with a single present value.
	Constant []string `json:"constant_columns"`
	// Missing lists feature columns with missing cells.
	Missing []ColumnCount `json:"missing_cells"`
	// Cardinality lists the distinct present values of each categorical
	// feature column.
	Cardinality []ColumnCount `json:"categorical_cardinality"`
	// Separators are single columns that split one class from all the
	// others on their own: leakage suspects.
	Separators []Separator `json:"single_column_separators"`
}

// ClassCount is the number of rows of a class.
type ClassCount struct {
	Label string `json:"label"`
	Count int    `json:"count"`
}

// ColumnCount is a count for a column.
type ColumnCount struct {
	Column string `json:"column"`
	Count  int    `json:"count"`
}

// Separator is a column that splits a class from the rest by itself.
type Separator struct {
	Column string `json:"column"`
	Class  string `json:"class"`
	// How: "threshold" (numeric or boolean: one cut puts the class on one
	// side and every other row on the other) or "values" (categorical: no
	// value, missing counted as a value, occurs both in the class and in
	// the rest).
	How string `json:"how"`
}

// NewProfile profiles the target and the feature columns of d.
func NewProfile(d *ingest.Dataset) Profile {
	p := Profile{Rows: d.Table.Rows, Constant: []string{}, Missing: []ColumnCount{}, Cardinality: []ColumnCount{}, Separators: []Separator{}}
	counts := make([]int, len(d.Labels))
	for _, c := range d.Classes {
		counts[c]++
	}
	for i, l := range d.Labels {
		p.Classes = append(p.Classes, ClassCount{Label: l, Count: counts[i]})
	}
	if least := slices.Min(counts); least > 0 {
		p.Imbalance = float64(slices.Max(counts)) / float64(least)
	}
	for _, col := range d.Features {
		if n := col.MissingCount(); n > 0 {
			p.Missing = append(p.Missing, ColumnCount{Column: col.Name, Count: n})
		}
		distinct := map[string]bool{}
		for r := 0; r < col.Len(); r++ {
			if !col.IsMissing(r) {
				distinct[col.Value(r)] = true
			}
		}
		if len(distinct) == 1 {
			p.Constant = append(p.Constant, col.Name)
		}
		if col.Kind == ingest.Categorical {
			p.Cardinality = append(p.Cardinality, ColumnCount{Column: col.Name, Count: len(distinct)})
		}
		for k, label := range d.Labels {
			if how := separates(col, d.Classes, k); how != "" {
				p.Separators = append(p.Separators, Separator{Column: col.Name, Class: label, How: how})
			}
		}
	}
	return p
}

// separates reports how col splits class k from the other rows on its
// own, or "" when it does not.
func separates(col *ingest.Column, classes []int, k int) string {
	if col.Kind == ingest.Categorical {
		inClass, inRest := map[string]bool{}, map[string]bool{}
		for r, c := range classes {
			v := "\x00missing"
			if !col.IsMissing(r) {
				v = col.Text[r]
			}
			if c == k {
				inClass[v] = true
			} else {
				inRest[v] = true
			}
		}
		for v := range inClass {
			if inRest[v] {
				return ""
			}
		}
		return "values"
	}
	if col.MissingCount() > 0 {
		return ""
	}
	classLow, classHigh := math.Inf(1), math.Inf(-1)
	restLow, restHigh := math.Inf(1), math.Inf(-1)
	for r, c := range classes {
		v := col.Numbers[r]
		if c == k {
			classLow, classHigh = min(classLow, v), max(classHigh, v)
		} else {
			restLow, restHigh = min(restLow, v), max(restHigh, v)
		}
	}
	if classHigh < restLow || classLow > restHigh {
		return "threshold"
	}
	return ""
}
