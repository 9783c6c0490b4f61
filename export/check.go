package export

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"deltafit/evaluate/separate"
)

// CheckReport is what `deltafit check` reports: the data, and the
// separability, conflicts and profile found in it.
type CheckReport struct {
	Data DataSummary `json:"data"`
	*separate.Report
}

// witnessWeightsShown is how many witness weights the text and Markdown
// reports list, the largest in magnitude first; JSON has them all.
const witnessWeightsShown = 20

// WriteCheckReport writes r in the given format.
func WriteCheckReport(w io.Writer, format Format, r *CheckReport) error {
	return writeReport(w, format, r, "deltafit check", r.Data, func(p *printer) { p.checkBody(r) })
}

// classList lists each label with its count: "a 2, b 1".
func classList(labels []string, counts []int) string {
	items := make([]string, len(labels))
	for i, l := range labels {
		items[i] = fmt.Sprintf("%s %d", l, counts[i])
	}
	return strings.Join(items, ", ")
}

func (p *printer) checkBody(r *CheckReport) {
	p.line("space: %s, %s", spaceNote(r.Space), count(len(r.Inputs), "coordinate"))
	if len(r.LeftOut) > 0 {
		p.line("left out of the raw space: %s", separate.LeftOutList(r.LeftOut))
	}
	p.splits(r.Splits)
	for _, s := range r.Splits {
		switch {
		case s.Certificate != nil:
			p.certificate(s)
		case s.Witness != nil:
			p.witness(s, r.Inputs)
		}
	}
	p.conflicts(r.Conflicts)
	p.profile(r.Profile)
}

func spaceNote(s separate.Space) string {
	if s == separate.Raw {
		return "raw numeric columns, standardized"
	}
	return "encoded input units"
}

func splitName(s separate.Split) string { return s.Positive + " against " + s.Negative }

func (p *printer) splits(splits []separate.Split) {
	p.subheading("linear separability (each answer verified on the data)")
	rows := make([][]string, len(splits))
	var notSolved []string // the reasons of the splits over the input cap, each once
	for i, s := range splits {
		var evidence string
		switch {
		case s.Certificate != nil:
			evidence = fmt.Sprintf("certificate of %d rows, residual %s", len(s.Certificate.Rows), num(s.Certificate.Residual))
		case s.Witness != nil:
			evidence = fmt.Sprintf("witness hyperplane, margin %s, %d rows checked", num(s.Witness.Margin), s.Witness.Rows)
		case s.Verdict == separate.TooManyInputs:
			evidence = "see below"
			if !slices.Contains(notSolved, s.Reason) {
				notSolved = append(notSolved, s.Reason)
			}
		default:
			evidence = s.Reason
		}
		rows[i] = []string{s.Positive, s.Negative, strconv.Itoa(s.Rows), string(s.Verdict), evidence}
	}
	p.table([]string{"positive", "negative", "rows", "verdict", "evidence"}, rows, nil)
	for _, reason := range notSolved {
		p.line("%s", reason)
	}
}

func (p *printer) certificate(s separate.Split) {
	c := s.Certificate
	p.subheading("certificate: " + splitName(s) + " (the weighted means coincide, so the convex hulls meet and no hyperplane separates them)")
	rows := make([][]string, len(c.Rows))
	for i, row := range c.Rows {
		side := s.Negative
		if c.Positive[i] {
			side = s.Positive
		}
		rows[i] = []string{strconv.Itoa(row), side, strconv.FormatFloat(c.Weights[i], 'g', 6, 64)}
	}
	p.table([]string{"row", "side", "weight"}, rows, nil)
	p.line("residual ‖Σλx − Σμx‖∞ = %s", num(c.Residual))
}

func (p *printer) witness(s separate.Split, inputs []string) {
	w := s.Witness
	p.subheading("witness: " + splitName(s) + " (w·x + b > 0 on every " + s.Positive + " row, < 0 on every other)")
	p.line("bias %s, margin %s, %d rows checked", num(w.Bias), num(w.Margin), w.Rows)
	order := make([]int, len(w.Weights))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int {
		x, y := math.Abs(w.Weights[a]), math.Abs(w.Weights[b])
		switch {
		case x > y:
			return -1
		case x < y:
			return 1
		}
		return 0
	})
	if len(order) > witnessWeightsShown {
		p.line("the %d largest of %d weights (all are in --format json):", witnessWeightsShown, len(order))
		order = order[:witnessWeightsShown]
	}
	rows := make([][]string, len(order))
	for i, j := range order {
		rows[i] = []string{inputs[j], num(w.Weights[j])}
	}
	p.table([]string{"input", "weight"}, rows, nil)
}

func (p *printer) conflicts(c separate.Conflicts) {
	p.subheading("conflicting rows (identical inputs, different classes)")
	if c.Count == 0 {
		p.line("none: the error floor of any classifier on these inputs is 0")
		return
	}
	p.line("%s, %s: any classifier makes at least %s, an error floor of %s",
		count(c.Count, "group"), count(c.Rows, "row"), count(c.MinErrors, "error"), num(c.ErrorFloor))
	rows := make([][]string, len(c.Groups))
	for i, g := range c.Groups {
		rows[i] = []string{strconv.Itoa(i + 1), rowList(g.Rows), labelCounts(g.Labels)}
	}
	p.table([]string{"group", "rows", "classes"}, rows, nil)
	if len(c.Groups) < c.Count {
		p.line("the first %d of %d groups", len(c.Groups), c.Count)
	}
}

// conflictRowsShown is how many row numbers of a conflicting group the text
// and Markdown reports list; JSON has them all.
const conflictRowsShown = 12

// labelCounts counts each label of a group, in label order: "a 2, b 1".
func labelCounts(labels []string) string {
	var order []string
	counts := map[string]int{}
	for _, l := range labels {
		if counts[l] == 0 {
			order = append(order, l)
		}
		counts[l]++
	}
	slices.Sort(order)
	n := make([]int, len(order))
	for i, l := range order {
		n[i] = counts[l]
	}
	return classList(order, n)
}

func (p *printer) profile(pr separate.Profile) {
	p.subheading("profile")
	labels, counts := make([]string, len(pr.Classes)), make([]int, len(pr.Classes))
	for i, c := range pr.Classes {
		labels[i], counts[i] = c.Label, c.Count
	}
	p.line("rows: %d; classes: %s; imbalance ratio (largest/smallest) %s", pr.Rows, classList(labels, counts), num(pr.Imbalance))
	p.line("constant columns: %s", listOrNone(pr.Constant))
	p.line("columns with missing cells: %s", columnCounts(pr.Missing))
	p.line("categorical cardinality: %s", columnCounts(pr.Cardinality))
	suspects := make([]string, len(pr.Separators))
	for i, s := range pr.Separators {
		suspects[i] = fmt.Sprintf("%s splits %s from the rest (%s)", s.Column, s.Class, s.How)
	}
	p.line("single columns that split a class off on their own (leakage suspects): %s", listOrNone(suspects))
	p.duplicates(pr)
}

// duplicateGroupsShown is how many groups of duplicate rows the text and
// Markdown reports list; JSON has every group it was given.
const duplicateGroupsShown = 5

func (p *printer) duplicates(pr separate.Profile) {
	if pr.DuplicateRows == 0 {
		p.line("duplicate rows (same features and class): none")
		return
	}
	groups := make([]string, min(len(pr.DuplicateGroups), duplicateGroupsShown))
	for i := range groups {
		groups[i] = rowList(pr.DuplicateGroups[i])
	}
	more := ""
	if pr.DuplicateRows > duplicateRowsIn(pr.DuplicateGroups[:len(groups)]) {
		more = "; …"
	}
	p.line("duplicate rows (same features and class): %d, each a repeat of an earlier row (rows %s%s); cross-validation may put copies of a row on both sides of a fold, which inflates its accuracy",
		pr.DuplicateRows, strings.Join(groups, "; "), more)
}

// duplicateRowsIn counts the repeats within groups.
func duplicateRowsIn(groups [][]int) int {
	n := 0
	for _, g := range groups {
		n += len(g) - 1
	}
	return n
}

// rowList lists at most conflictRowsShown row numbers, then the group's size.
func rowList(rows []int) string {
	numbers := make([]string, min(len(rows), conflictRowsShown))
	for k := range numbers {
		numbers[k] = strconv.Itoa(rows[k])
	}
	if len(rows) > conflictRowsShown {
		numbers = append(numbers, fmt.Sprintf("… (%d rows)", len(rows)))
	}
	return strings.Join(numbers, " ")
}

func columnCounts(cc []separate.ColumnCount) string {
	items := make([]string, len(cc))
	for i, c := range cc {
		items[i] = fmt.Sprintf("%s %d", c.Column, c.Count)
	}
	return listOrNone(items)
}

func listOrNone(items []string) string {
	if len(items) == 0 {
		return "none"
	}
	return strings.Join(items, "; ")
}
