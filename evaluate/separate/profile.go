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
	// Separators are single columns that alone split one class from the
	// rest on every row: what was measured, not a judgement (a column can
	// be a legitimately strong feature, or carry the target by mistake).
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

// Separator is a column that alone splits a class from the rest.
type Separator struct {
	Column string `json:"column"`
	Class  string `json:"class"`
	// How: "threshold" (numeric or boolean: every row of the class lies on
	// one side of a cut and every other row on the other) or "values"
	// (categorical: no value, missing counted as a value, occurs both in
	// the class and in the rest).
	How string `json:"how"`
	// Rows is the number of rows the split holds on: all of them.
	Rows int `json:"rows"`
	// ClassBelow tells, for a threshold, whether the class is on the low
	// side; ClassEdge is the class's value nearest the cut and RestEdge
	// the rest's (ClassEdge < RestEdge when ClassBelow).
	ClassBelow bool    `json:"class_below,omitempty"`
	ClassEdge  float64 `json:"class_edge,omitempty"`
	RestEdge   float64 `json:"rest_edge,omitempty"`
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
			if s, ok := separates(col, d.Classes, k); ok {
				s.Column, s.Class, s.Rows = col.Name, label, len(d.Classes)
				p.Separators = append(p.Separators, s)
			}
		}
	}
	for _, rows := range groupRows(allRows(d.Table.Rows), func(r int) string { return rowKey(d, r) }) {
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

// separates reports whether col alone splits class k from the other
// rows, and how.
func separates(col *tabular.Column, classes []int, k int) (Separator, bool) {
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
				return Separator{}, false
			}
		}
		return Separator{How: "values"}, true
	}
	if col.MissingCount() > 0 {
		return Separator{}, false
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
	switch {
	case classHigh < restLow:
		return Separator{How: "threshold", ClassBelow: true, ClassEdge: classHigh, RestEdge: restLow}, true
	case classLow > restHigh:
		return Separator{How: "threshold", ClassEdge: classLow, RestEdge: restHigh}, true
	}
	return Separator{}, false
}

// allRows is 0, 1, …, n−1.
func allRows(n int) []int {
	rows := make([]int, n)
	for i := range rows {
		rows[i] = i
	}
	return rows
}
