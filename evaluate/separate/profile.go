package separate

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"deltafit/ingest/tabular"
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
	// DuplicateRows counts the rows that repeat an earlier row: the same
	// value in every feature column (missing matching missing) and the same
	// class. Cross-validation can put copies of a row on both sides of a
	// fold, which inflates its accuracy. Rows with the same features but
	// different classes are conflicts, not duplicates.
	DuplicateRows int `json:"duplicate_rows"`
	// DuplicateGroups are the first groups of identical rows, in order of
	// their first row: 1-based row numbers, ascending.
	DuplicateGroups [][]int `json:"duplicate_groups"`
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

// NewProfile profiles the target and the feature columns of d, listing at
// most the first most groups of duplicate rows.
func NewProfile(d *tabular.Dataset, most int) Profile {
	p := Profile{Rows: d.Table.Rows, Constant: []string{}, Missing: []ColumnCount{}, Cardinality: []ColumnCount{}, Separators: []Separator{},
		DuplicateGroups: [][]int{}}
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
		if col.Kind == tabular.Categorical {
			p.Cardinality = append(p.Cardinality, ColumnCount{Column: col.Name, Count: len(distinct)})
		}
		for k, label := range d.Labels {
			if how := separates(col, d.Classes, k); how != "" {
				p.Separators = append(p.Separators, Separator{Column: col.Name, Class: label, How: how})
			}
		}
	}
	for _, rows := range groupRows(d.Table.Rows, func(r int) string { return rowKey(d, r) }) {
		if len(rows) == 1 {
			continue
		}
		p.DuplicateRows += len(rows) - 1
		if len(p.DuplicateGroups) < most {
			numbers := make([]int, len(rows))
			for i, r := range rows {
				numbers[i] = r + 1
			}
			p.DuplicateGroups = append(p.DuplicateGroups, numbers)
		}
	}
	return p
}

// rowKey is a map key equal for rows with the same class and the same
// feature cells, missing matching missing.
func rowKey(d *tabular.Dataset, r int) string {
	var b strings.Builder
	b.WriteString(strconv.Itoa(d.Classes[r]))
	for _, col := range d.Features {
		if col.IsMissing(r) {
			b.WriteString("\x00m")
			continue
		}
		v := col.Value(r)
		fmt.Fprintf(&b, "\x00%d:%s", len(v), v) // the length keeps "a\x00" "b" apart from "a" "\x00b"
	}
	return b.String()
}

// separates reports how col splits class k from the other rows on its
// own, or "" when it does not.
func separates(col *tabular.Column, classes []int, k int) string {
	if col.Kind == tabular.Categorical {
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
