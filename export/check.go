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

// valueColumnsShown is the most raw columns a certificate table shows as
// columns of their own; with more, and in the encoded space, each row
// lists its values in one cell.
const valueColumnsShown = 8

// WriteCheckReport writes r in the given format.
func WriteCheckReport(w io.Writer, format Format, r *CheckReport) error {
	return writeReport(w, format, r, "deltafit check", r.Data, func(p *printer) { p.checkBody(r) })
}

// countList lists each label with its count, "a: 2, b: 1", so that
// numeric labels cannot be read as counts.
func countList(labels []string, counts []int) string {
	items := make([]string, len(labels))
	for i, l := range labels {
		items[i] = fmt.Sprintf("%s: %d", l, counts[i])
	}
	return strings.Join(items, ", ")
}

func (p *printer) checkBody(r *CheckReport) {
	p.line("space: %s, %s", spaceNote(r.Space), count(len(r.Inputs), "coordinate"))
	p.line("solver budget: %d simplex pivots per split (--budget)", r.Budget)
	if len(r.LeftOut) > 0 {
		p.line("left out of the raw space: %s", separate.LeftOutList(r.LeftOut))
	}
	if d := r.Dropped; d.Count > 0 {
		more := ""
		if d.Count > len(d.Rows) {
			more = ", …"
		}
		p.line("rows left out (%s): %d (rows %s%s); the other rows keep their numbers in the file",
			d.Reason, d.Count, strings.Join(itoa(d.Rows), " "), more)
	}
	p.splits(r.Splits)
	for _, s := range r.Splits {
		switch {
		case s.Certificate != nil:
			p.certificate(s, r.Inputs, r.Space)
		case s.Witness != nil:
			p.witness(s, r.Inputs, r.Scales)
		}
	}
	p.conflicts(r.Conflicts)
	p.profile(r.Profile)
}

func itoa(numbers []int) []string {
	out := make([]string, len(numbers))
	for i, n := range numbers {
		out[i] = strconv.Itoa(n)
	}
	return out
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
	var shared []string // reasons of the splits over the input cap, each once
	var reasons []string
	for i, s := range splits {
		var evidence string
		switch {
		case s.Certificate != nil:
			evidence = fmt.Sprintf("certificate of %s, residual %s", count(len(s.Certificate.Rows), "row"), num(s.Certificate.Residual))
		case s.Witness != nil:
			evidence = fmt.Sprintf("witness hyperplane, margin %s, %d rows checked", num(s.Witness.Margin), s.Witness.Rows)
		case s.Verdict == separate.TooManyInputs:
			evidence = "see below"
			if !slices.Contains(shared, s.Reason) {
				shared = append(shared, s.Reason)
			}
		default:
			evidence = "see below"
			reasons = append(reasons, splitName(s)+": "+s.Reason)
		}
		rows[i] = []string{s.Positive, s.Negative, strconv.Itoa(s.Rows), string(s.Verdict), evidence, strconv.Itoa(s.Pivots)}
	}
	p.table([]string{"positive", "negative", "rows", "verdict", "evidence", "pivots"}, rows, nil)
	for _, reason := range append(shared, reasons...) {
		p.line("%s", reason)
	}
}

func (p *printer) certificate(s separate.Split, inputs []string, space separate.Space) {
	c := s.Certificate
	p.subheading(fmt.Sprintf("certificate: %s (%s, at most inputs + 2; the weighted means coincide, so the convex hulls meet and no hyperplane separates them)",
		splitName(s), count(len(c.Rows), "row")))
	valueUnits := "the raw columns"
	if space == separate.Encoded {
		valueUnits = "the units that are on"
	}
	header := []string{"row", "side", "weight"}
	wide := len(inputs) > valueColumnsShown || space == separate.Encoded
	if !wide {
		header = append(header, inputs...)
	}
	rows := make([][]string, 0, len(c.Rows)+1)
	for i, row := range c.Rows {
		side := s.Negative
		if c.Positive[i] {
			side = s.Positive
		}
		cells := []string{strconv.Itoa(row), side, strconv.FormatFloat(c.Weights[i], 'g', 6, 64)}
		if !wide {
			cells = append(cells, values(c.Values[i], inputs, space)...)
		}
		rows = append(rows, cells)
	}
	if !wide {
		rows = append(rows, append([]string{"common point", "both", ""}, values(c.Point, inputs, space)...))
	}
	p.table(header, rows, nil)
	if wide {
		p.line("values of the rows (%s):", valueUnits)
		for i, row := range c.Rows {
			p.line("  row %d: %s", row, strings.Join(values(c.Values[i], inputs, space), ", "))
		}
		p.line("  common point: %s", strings.Join(values(c.Point, inputs, space), ", "))
	}
	minimal := ""
	if c.Minimal {
		minimal = "; no row can be dropped: these weights are the only ones that balance these rows"
	}
	p.line("residual ‖Σλx − Σμx‖∞ = %s%s", num(c.Residual), minimal)
}

// values formats a row's coordinates: in the raw space each value, in the
// encoded space the units that are on, with their value when it is not 1.
func values(x []float64, inputs []string, space separate.Space) []string {
	var items []string
	for j, v := range x {
		switch {
		case space != separate.Encoded:
			items = append(items, strconv.FormatFloat(v, 'g', 6, 64))
		case v == 0:
		case v == 1:
			items = append(items, inputs[j])
		default:
			items = append(items, inputs[j]+"="+strconv.FormatFloat(v, 'g', 6, 64))
		}
	}
	if len(items) == 0 {
		return []string{"none on"}
	}
	return items
}

func (p *printer) witness(s separate.Split, inputs []string, scales []separate.ColumnScale) {
	w := s.Witness
	p.subheading("witness: " + splitName(s) + " (w·x + b > 0 on every " + s.Positive + " row, < 0 on every other)")
	if w.DataWeights != nil {
		p.line("bias %s in the columns' units (%s standardized); margin %s: the Euclidean distance from the hyperplane to the nearest row, in standardized units; %d rows checked",
			num(*w.DataBias), num(w.Bias), num(w.Margin), w.Rows)
	} else {
		p.line("bias %s; margin %s: the Euclidean distance from the hyperplane to the nearest row, in input units; %d rows checked", num(w.Bias), num(w.Margin), w.Rows)
	}
	var order []int
	for j := range w.Weights {
		if !slices.Contains(w.Constant, j) {
			order = append(order, j)
		}
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
	if n := len(w.Constant); n > 0 {
		p.line("%d of %d inputs are the same on every row of the split, so they cannot tell the sides apart: weight 0, not shown", n, len(w.Weights))
	}
	if len(order) > witnessWeightsShown {
		p.line("the %d largest of %d weights of the inputs that vary (all are in --format json):", witnessWeightsShown, len(order))
		order = order[:witnessWeightsShown]
	}
	rows := make([][]string, len(order))
	for i, j := range order {
		if w.DataWeights != nil {
			rows[i] = []string{inputs[j], num(w.DataWeights[j]), num(w.Weights[j]), num(scales[j].Mean), num(scales[j].SD)}
		} else {
			rows[i] = []string{inputs[j], num(w.Weights[j])}
		}
	}
	if w.DataWeights != nil {
		p.table([]string{"column", "weight", "standardized weight", "mean", "sd"}, rows, nil)
		return
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

// labelCounts counts each label of a group, in label order: "a: 2, b: 1".
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
	return countList(order, n)
}

func (p *printer) profile(pr separate.Profile) {
	p.subheading("profile")
	labels, counts := make([]string, len(pr.Classes)), make([]int, len(pr.Classes))
	for i, c := range pr.Classes {
		labels[i], counts[i] = c.Label, c.Count
	}
	p.line("rows: %d; classes: %s; imbalance ratio (largest/smallest) %s", pr.Rows, countList(labels, counts), num(pr.Imbalance))
	p.line("constant columns: %s", listOrNone(pr.Constant))
	p.line("columns with missing cells: %s", columnCounts(pr.Missing))
	p.line("categorical cardinality: %s", columnCounts(pr.Cardinality))
	found := make([]string, len(pr.Separators))
	for i, s := range pr.Separators {
		found[i] = separatorText(s)
	}
	p.line("single columns that alone split a class from the rest: %s", listOrNone(found))
	p.duplicates(pr)
}

// separatorText says what was measured: "petal_length ≤ 1.9 on every setosa
// row and ≥ 3 on every other, 150 of 150 rows".
func separatorText(s separate.Separator) string {
	if s.How != "threshold" {
		return fmt.Sprintf("%s: no value is shared by %s and the other classes, %d of %d rows", s.Column, s.Class, s.Rows, s.Rows)
	}
	classSide, restSide := "≥", "≤"
	if s.ClassBelow {
		classSide, restSide = "≤", "≥"
	}
	return fmt.Sprintf("%s %s %s on every %s row and %s %s on every other, %d of %d rows",
		s.Column, classSide, strconv.FormatFloat(s.ClassEdge, 'g', -1, 64), s.Class, restSide, strconv.FormatFloat(s.RestEdge, 'g', -1, 64), s.Rows, s.Rows)
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
