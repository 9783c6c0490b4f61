package tabular

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
)

// Dataset is a table with a chosen target column: the class of each row and
// the feature columns a Plan encodes.
type Dataset struct {
	Table    *Table
	Target   string
	Labels   []string  // class labels, sorted (numerically when all are numbers)
	Classes  []int     // class index of each row, into Labels
	Features []*Column // every column but the target and the ignored ones, in table order
	// SameNumber lists groups of labels that are distinct as text but
	// the same number ("007" and "7"): distinct classes, which a user may
	// have meant as one.
	SameNumber [][]string
}

// MaxNumericClasses is the most distinct values a numeric target may
// hold: a numeric column with more looks continuous, and NewDataset
// refuses it unless the column is declared categorical.
const MaxNumericClasses = 20

// NewDataset picks the target column and the features of t. Every row must
// have a target value (see MissingTarget to leave out rows without one),
// and there must be at least two classes.
func NewDataset(t *Table, target string, ignore []string) (*Dataset, error) {
	col := t.Column(target)
	if col == nil {
		return nil, &DataError{File: t.Name, Name: target, Err: fmt.Errorf("there is no target column of that name; the columns are %s%s", columnList(t), delimiterHint(t))}
	}
	if err := checkIgnore(t, target, ignore); err != nil {
		return nil, err
	}
	labels, classes, err := targetClasses(t, col)
	if err != nil {
		return nil, err
	}
	if err := CheckLabels(t.Name, col, t.Position(target), labels); err != nil {
		return nil, err
	}
	d := &Dataset{Table: t, Target: target, Labels: labels, Classes: classes, SameNumber: sameNumber(labels)}
	if d.Features, err = featureColumns(t, target, ignore); err != nil {
		return nil, err
	}
	return d, nil
}

// CheckLabels checks the sorted class labels of the target column col
// (position 1-based, 0 unknown, in file) as NewDataset does: at least two
// classes, and at most MaxNumericClasses when they are numbers.
func CheckLabels(file string, col *Column, position int, labels []string) error {
	if (col.Kind == Numeric || (col.LabelText && allNumbers(labels))) && len(labels) > MaxNumericClasses {
		return &DataError{File: file, Column: position, Name: col.Name,
			Err: fmt.Errorf("the target holds %d distinct numbers, so it looks like a measurement, not a class (at most %d distinct numbers are taken as classes); group it into classes, or declare the column categorical to take each value as a class", len(labels), MaxNumericClasses)}
	}
	if len(labels) < 2 {
		first := ""
		if len(labels) == 1 {
			first = labels[0]
		}
		return &DataError{File: file, Column: position, Name: col.Name,
			Err: fmt.Errorf("every row has the same class %q; a classifier needs at least two classes", first)}
	}
	return nil
}

// SortLabels sorts class labels as NewDataset orders them: numerically
// when all are numbers, else as text.
func SortLabels(labels []string) { sortLabels(labels) }

// Features returns the columns of t other than the target (none for "")
// and the ignored ones, in table order, as NewDataset picks them. Ignoring
// a column t does not have, or the target, is an error, and so is a
// feature column whose every cell is missing.
func Features(t *Table, target string, ignore []string) ([]*Column, error) {
	if err := checkIgnore(t, target, ignore); err != nil {
		return nil, err
	}
	return featureColumns(t, target, ignore)
}

func checkIgnore(t *Table, target string, ignore []string) error {
	for _, name := range ignore {
		if name == target {
			return &DataError{File: t.Name, Name: name, Err: errors.New("the target column cannot also be ignored")}
		}
		if t.Column(name) == nil {
			return &DataError{File: t.Name, Name: name, Err: fmt.Errorf("there is no column of that name to ignore; the columns are %s", columnList(t))}
		}
	}
	return nil
}

func featureColumns(t *Table, target string, ignore []string) ([]*Column, error) {
	var features []*Column
	for _, c := range t.Columns {
		if c.Name == target || slices.Contains(ignore, c.Name) {
			continue
		}
		if c.MissingCount() == t.Rows {
			return nil, &DataError{File: t.Name, Column: t.Position(c.Name), Name: c.Name,
				Err: errors.New("every cell of the column is missing; fill it in or ignore the column")}
		}
		features = append(features, c)
	}
	return features, nil
}

// MissingTarget reports whether row i of t has no value in the target
// column; false when there is no such column.
func MissingTarget(t *Table, target string) func(i int) bool {
	col := t.Column(target)
	return func(i int) bool { return col != nil && col.IsMissing(i) }
}

// delimiterHint suggests another delimiter when the header was read as one
// column whose name holds a common delimiter.
func delimiterHint(t *Table) string {
	if len(t.Columns) != 1 {
		return ""
	}
	for _, d := range []string{",", ";", "\t", "|"} {
		if strings.Contains(t.Columns[0].Name, d) {
			return fmt.Sprintf("; the header was read as one column: is the delimiter %q?", d)
		}
	}
	return ""
}

// TargetClasses maps the target column of t to class indices of known
// labels, as when a saved model scores labelled data. A cell that is no
// label as written matches the label of the same number or truth value in
// the form a numeric or boolean column gives it ("1.0" and "1e0" match "1",
// "TRUE" matches "true"), so that a target read as text finds the labels of
// one read as numbers or booleans. A cell that matches no label is an
// error naming the row.
func TargetClasses(t *Table, target string, labels []string) ([]int, error) {
	col := t.Column(target)
	if col == nil {
		return nil, NoTargetColumn(t.Name, target, columnNames(t))
	}
	index := make(map[string]int, len(labels))
	for i, l := range labels {
		index[l] = i
	}
	classes := make([]int, t.Rows)
	for i := range classes {
		if col.IsMissing(i) {
			return nil, missingTarget(t, col, i)
		}
		k, ok := index[col.Value(i)]
		if !ok && col.Kind == Categorical {
			k, ok = index[canonicalValue(col.Text[i])] // "" is no label: a label is never a missing cell
		}
		if !ok {
			return nil, &DataError{File: t.Name, Row: t.RowNumber(i), Column: t.Position(target), Name: target,
				Err: fmt.Errorf("class %q is not one the model was trained on (%s)", col.Value(i), quoteList(labels))}
		}
		classes[i] = k
	}
	return classes, nil
}

func targetClasses(t *Table, col *Column) ([]string, []int, error) {
	seen := map[string]bool{}
	for i := 0; i < t.Rows; i++ {
		if col.IsMissing(i) {
			return nil, nil, missingTarget(t, col, i)
		}
		seen[col.Value(i)] = true
	}
	labels := make([]string, 0, len(seen))
	for l := range seen {
		labels = append(labels, l)
	}
	sortLabels(labels)
	classes, err := TargetClasses(t, col.Name, labels)
	return labels, classes, err
}

func missingTarget(t *Table, col *Column, row int) error {
	return &DataError{File: t.Name, Row: t.RowNumber(row), Column: t.Position(col.Name), Name: col.Name,
		Err: errors.New("the target cell is missing; every row needs a class (drop the row or fill it in)")}
}

// allNumbers reports whether every label parses as a number.
func allNumbers(labels []string) bool {
	for _, l := range labels {
		if _, err := strconv.ParseFloat(l, 64); err != nil {
			return false
		}
	}
	return true
}

// sameNumber returns the groups of labels that parse as the same number,
// each in label order, the groups in the order of their first label.
func sameNumber(labels []string) [][]string {
	groups := map[float64][]string{}
	var order []float64
	for _, l := range labels {
		x, err := strconv.ParseFloat(strings.TrimSpace(l), 64)
		if err != nil {
			continue
		}
		if len(groups[x]) == 0 {
			order = append(order, x)
		}
		groups[x] = append(groups[x], l)
	}
	var same [][]string
	for _, x := range order {
		if len(groups[x]) > 1 {
			same = append(same, groups[x])
		}
	}
	return same
}

// sortLabels sorts numerically when every label is a number, else as text.
// Labels of equal value ("1", "1.0", "01") are ordered as text, so the order
// never depends on the order labels arrive in.
func sortLabels(labels []string) {
	numbers := make(map[string]float64, len(labels))
	for _, l := range labels {
		x, err := strconv.ParseFloat(l, 64)
		if err != nil {
			slices.Sort(labels)
			return
		}
		numbers[l] = x
	}
	slices.SortFunc(labels, func(a, b string) int {
		if c := cmp.Compare(numbers[a], numbers[b]); c != 0 {
			return c
		}
		return strings.Compare(a, b)
	})
}

func columnList(t *Table) string { return quoteList(columnNames(t)) }

func columnNames(t *Table) []string {
	names := make([]string, len(t.Columns))
	for i, c := range t.Columns {
		names[i] = c.Name
	}
	return names
}

// NoTargetColumn is the error of an input without the target column;
// columns are the input's column names.
func NoTargetColumn(file, target string, columns []string) *DataError {
	return &DataError{File: file, Name: target, Err: fmt.Errorf("there is no target column of that name; the columns are %s", quoteList(columns))}
}

func quoteList(names []string) string {
	const most = 12
	s := ""
	for i, n := range names {
		if i == most {
			return s + fmt.Sprintf(", … (%d in all)", len(names))
		}
		if i > 0 {
			s += ", "
		}
		s += strconv.Quote(n)
	}
	return s
}

// canonicalValue returns the text of the number or truth value v writes,
// as Column.Value gives it for a numeric or boolean cell, or "" if v is
// neither. Numbers are read in decimal notation only, as the readers do.
func canonicalValue(v string) string {
	v = strings.TrimSpace(v)
	switch strings.ToLower(v) {
	case "true", "false":
		return strings.ToLower(v)
	}
	if strings.ContainsAny(v, "xX_") {
		return ""
	}
	x, err := strconv.ParseFloat(v, 64)
	if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}
