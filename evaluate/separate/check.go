package separate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat"

	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// Space is the space in which rows are compared.
type Space string

const (
	// Encoded is the input units of the encoding plan, as fit sees them.
	Encoded Space = "encoded"
	// Raw is the numeric feature columns, each standardized to mean 0 and
	// sample standard deviation 1; constant columns are left out.
	Raw Space = "raw"
)

// ParseSpace parses "encoded" or "raw".
func ParseSpace(s string) (Space, error) {
	switch sp := Space(s); sp {
	case Encoded, Raw:
		return sp, nil
	}
	return "", fmt.Errorf("separate: unknown space %q (want encoded or raw)", s)
}

// Missing is what the raw space does with a row that has a missing cell
// in a numeric feature column.
type Missing string

const (
	// MissingRefuse makes a missing cell an error naming it.
	MissingRefuse Missing = "refuse"
	// MissingDrop leaves the row out of the check, counted in the report;
	// the other rows keep their numbers.
	MissingDrop Missing = "drop"
)

// ParseMissing parses "refuse" or "drop".
func ParseMissing(s string) (Missing, error) {
	switch m := Missing(s); m {
	case MissingRefuse, MissingDrop:
		return m, nil
	}
	return "", fmt.Errorf("separate: unknown missing-cell policy %q (want refuse or drop)", s)
}

// DefaultGroups is how many conflicting groups a report lists by default.
const DefaultGroups = 10

// CheckOptions chooses what Check examines. The zero value checks each
// class against the rest in the encoded space of the default plan.
type CheckOptions struct {
	Space Space          // default Encoded
	Plan  encode.Options // the encoding, for the encoded space
	Pairs bool           // also check each pair of classes
	// Split, when set, is the one split to check: a class and another
	// class, or a class and Rest; the first is the positive side.
	Split [2]string
	// Positive, when set, is the class that is the positive side of every
	// split it is a side of (by default, with two classes the later label,
	// in the pairs the earlier one).
	Positive string
	// Missing is the raw space's policy for missing cells (default
	// MissingRefuse). The encoded space gives them their own unit.
	Missing Missing
	Seed    uint64 // see Options.Seed
	// Groups is how many conflicting and duplicate groups to list
	// (default DefaultGroups; negative lists none).
	Groups int
	// MaxInputs is Options.MaxInputs (default MaxInputs).
	MaxInputs int
	// Budget is Options.Budget: the pivots each split may spend (default
	// DefaultBudget).
	Budget int
	// Progress, when not nil, is called before each split (Result nil)
	// and after it.
	Progress func(Progress)
}

// Progress tells where Check is: split Index (0-based) of Total.
type Progress struct {
	Index, Total       int
	Positive, Negative string
	Result             *Split // nil when the split starts
}

// Report is what Check finds.
type Report struct {
	Space  Space    `json:"space"`
	Inputs []string `json:"inputs"` // names of the coordinates, in order
	// LeftOut lists the feature columns the raw space leaves out, and why
	// (none in the encoded space).
	LeftOut []LeftOut `json:"space_left_out"`
	// Scales are the mean and standard deviation of each raw-space
	// coordinate (empty in the encoded space).
	Scales []ColumnScale `json:"standardization"`
	// Dropped are the rows left out for a missing cell (raw space with
	// MissingDrop).
	Dropped Dropped `json:"rows_left_out"`
	// Budget is the pivot budget of each split.
	Budget    int       `json:"pivot_budget"`
	Splits    []Split   `json:"splits"`
	Conflicts Conflicts `json:"conflicts"`
	Profile   Profile   `json:"profile"`
}

// ColumnScale is how the raw space standardizes a column: z = (x − Mean)/SD.
type ColumnScale struct {
	Column string  `json:"column"`
	Mean   float64 `json:"mean"`
	SD     float64 `json:"sd"`
}

// Dropped counts the rows left out of the check.
type Dropped struct {
	Count int `json:"count"`
	// Rows are the first droppedShown row numbers (1-based, as in the
	// file).
	Rows   []int  `json:"rows"`
	Reason string `json:"reason,omitempty"`
}

// droppedShown is how many dropped row numbers a report lists.
const droppedShown = 20

// Split is the verified answer for one class against the rest (Negative
// is "rest") or against another class.
type Split struct {
	Positive string  `json:"positive"`
	Negative string  `json:"negative"`
	Verdict  Verdict `json:"verdict"`
	// Separable is true or false when proven, null when undecided.
	Separable   *bool        `json:"separable"`
	Reason      string       `json:"reason,omitempty"`
	Rows        int          `json:"rows"` // rows in the split
	Distance    float64      `json:"hull_distance"`
	Pivots      int          `json:"pivots"`
	Certificate *Certificate `json:"certificate,omitempty"`
	Witness     *Witness     `json:"witness,omitempty"`
}

// Rest names the negative side of a one-against-the-rest split.
const Rest = "rest"

// Check profiles d, finds conflicting rows and decides, with verified
// proofs, which splits of its classes a hyperplane can make. With two
// classes there is one split, Labels[1] against Labels[0] (or Positive
// against the other); with more, each class against the rest and, with
// Pairs, each pair of classes; with Split, that split alone. When ctx
// ends, the split being solved and those after it are OutOfTime.
func Check(ctx context.Context, d *tabular.Dataset, opts CheckOptions) (*Report, error) {
	if opts.Space == "" {
		opts.Space = Encoded
	}
	if opts.Groups == 0 {
		opts.Groups = DefaultGroups
	}
	if opts.Missing == "" {
		opts.Missing = MissingRefuse
	}
	if opts.Missing == MissingDrop && opts.Space != Raw {
		return nil, errors.New("separate: dropping rows with missing cells is for the raw space; the encoded space gives a column's missing cells their own unit")
	}
	splits, err := chooseSplits(d, opts)
	if err != nil {
		return nil, err
	}
	c, err := coordinatesOf(d, opts.Space, opts.Plan, opts.Missing)
	if err != nil {
		return nil, err
	}
	r := &Report{
		Space:     opts.Space,
		Inputs:    c.Names,
		LeftOut:   c.LeftOut,
		Scales:    c.Scales,
		Dropped:   Dropped{Rows: []int{}},
		Budget:    cmpOr(opts.Budget, DefaultBudget),
		Conflicts: FindConflicts(c.Points, d.Classes, d.Labels, c.Kept, max(opts.Groups, 0)),
		Profile:   NewProfile(d, max(opts.Groups, 0)),
	}
	if r.Scales == nil {
		r.Scales = []ColumnScale{}
	}
	for row, kept := range c.Kept {
		if !kept {
			r.Dropped.Count++
			if len(r.Dropped.Rows) < droppedShown {
				r.Dropped.Rows = append(r.Dropped.Rows, row+1)
			}
		}
	}
	if r.Dropped.Count > 0 {
		r.Dropped.Reason = "a missing cell in a numeric feature column"
	}
	for i, s := range splits {
		pos, neg := s.rows(d, c.Kept)
		if opts.Progress != nil {
			opts.Progress(Progress{Index: i, Total: len(splits), Positive: s.positive, Negative: s.negative})
		}
		if len(pos) == 0 || len(neg) == 0 {
			return nil, fmt.Errorf("separate: %s against %s: a side has no rows left once the rows with missing cells are dropped", s.positive, s.negative)
		}
		res, err := Separate(ctx, c.Points, pos, neg, Options{Seed: opts.Seed, MaxInputs: opts.MaxInputs, Budget: opts.Budget})
		if err != nil {
			return nil, fmt.Errorf("separate: %s against %s: %w", s.positive, s.negative, err)
		}
		if res.Verdict == TooManyInputs {
			res.Reason += "; " + fewerInputs[opts.Space]
		}
		split := newSplit(s.positive, s.negative, len(pos)+len(neg), res)
		c.inDataUnits(&split)
		r.Splits = append(r.Splits, split)
		if opts.Progress != nil {
			opts.Progress(Progress{Index: i, Total: len(splits), Positive: s.positive, Negative: s.negative, Result: &r.Splits[i]})
		}
	}
	return r, nil
}

// splitChoice is one split: a class against another or against the rest.
type splitChoice struct {
	positive, negative string
	pos, neg           int // class indexes; neg is −1 for the rest
}

// rows returns the rows of the split's sides that are kept (all when kept
// is nil).
func (s splitChoice) rows(d *tabular.Dataset, kept []bool) (pos, neg []int) {
	for row, c := range d.Classes {
		if kept != nil && !kept[row] {
			continue
		}
		switch {
		case c == s.pos:
			pos = append(pos, row)
		case c == s.neg || (s.neg < 0 && c != s.pos):
			neg = append(neg, row)
		}
	}
	return pos, neg
}

// chooseSplits lists the splits Check decides.
func chooseSplits(d *tabular.Dataset, opts CheckOptions) ([]splitChoice, error) {
	class := func(label, what string) (int, error) {
		if i := slices.Index(d.Labels, label); i >= 0 {
			return i, nil
		}
		return 0, fmt.Errorf("separate: %s %q is not a class of %s; the classes are %s", what, label, d.Target, strings.Join(quoted(d.Labels), ", "))
	}
	pair := func(a, b int) splitChoice {
		if opts.Positive == d.Labels[b] {
			a, b = b, a
		}
		return splitChoice{d.Labels[a], d.Labels[b], a, b}
	}
	positive := -1
	if opts.Positive != "" {
		var err error
		if positive, err = class(opts.Positive, "positive class"); err != nil {
			return nil, err
		}
	}
	if opts.Split != [2]string{} {
		a, err := class(opts.Split[0], "split class")
		if err != nil {
			return nil, err
		}
		if opts.Split[1] == Rest {
			if positive >= 0 && positive != a {
				return nil, fmt.Errorf("separate: the positive class %q is not a side of the split %s against %s", opts.Positive, opts.Split[0], Rest)
			}
			return []splitChoice{{d.Labels[a], Rest, a, -1}}, nil
		}
		b, err := class(opts.Split[1], "split class")
		if err != nil {
			return nil, err
		}
		if a == b {
			return nil, fmt.Errorf("separate: the split %s against %s has the same class on both sides", opts.Split[0], opts.Split[1])
		}
		if positive >= 0 && positive != a && positive != b {
			return nil, fmt.Errorf("separate: the positive class %q is not a side of the split %s against %s", opts.Positive, opts.Split[0], opts.Split[1])
		}
		if positive < 0 {
			return []splitChoice{{d.Labels[a], d.Labels[b], a, b}}, nil
		}
		return []splitChoice{pair(a, b)}, nil
	}
	if len(d.Labels) == 2 {
		return []splitChoice{pair(1, 0)}, nil
	}
	var splits []splitChoice
	for k, label := range d.Labels {
		splits = append(splits, splitChoice{label, Rest, k, -1})
	}
	for i := 0; opts.Pairs && i < len(d.Labels); i++ {
		for j := i + 1; j < len(d.Labels); j++ {
			splits = append(splits, pair(i, j))
		}
	}
	return splits, nil
}

func quoted(items []string) []string {
	out := make([]string, len(items))
	for i, s := range items {
		out[i] = fmt.Sprintf("%q", s)
	}
	return out
}

// fewerInputs says, for each space, how to bring the inputs under the cap.
var fewerInputs = map[Space]string{
	Encoded: "use fewer feature columns (--ignore), one unit per numeric column (--numeric zscore or threshold) or a smaller thermometer:K, or --space raw",
	Raw:     "use fewer numeric columns (--ignore)",
}

func newSplit(positive, negative string, rows int, res *Result) Split {
	s := Split{
		Positive: positive, Negative: negative, Verdict: res.Verdict, Reason: res.Reason, Rows: rows,
		Distance: res.Distance, Pivots: res.Pivots, Certificate: res.Certificate, Witness: res.Witness,
	}
	if res.Verdict.Decided() {
		separable := res.Verdict == Separable
		s.Separable = &separable
	}
	return s
}

// LeftOut is a feature column the raw space leaves out, and why.
type LeftOut struct {
	Column string `json:"column"`
	Reason string `json:"reason"`
}

// Coordinates are the rows of a dataset in one space.
type Coordinates struct {
	Points Points
	Names  []string // of the coordinates, in order
	// LeftOut are the feature columns the raw space leaves out.
	LeftOut []LeftOut
	// Scales, in the raw space, standardize each coordinate's column.
	Scales []ColumnScale
	// Kept marks the rows in the check; nil keeps every row. A row left
	// out holds zeros.
	Kept []bool
	// columns are the raw space's columns, for values in the data's units.
	columns []*tabular.Column
}

// NewCoordinates returns the rows of d in the given space, refusing
// missing cells in the raw space.
func NewCoordinates(d *tabular.Dataset, space Space, plan encode.Options) (*Coordinates, error) {
	return coordinatesOf(d, space, plan, MissingRefuse)
}

func coordinatesOf(d *tabular.Dataset, space Space, plan encode.Options, missing Missing) (*Coordinates, error) {
	switch space {
	case Encoded:
		fitted, err := encode.FitPlan(d.Features, nil, plan)
		if err != nil {
			return nil, err
		}
		values, _ := fitted.EncodeTo(nil, d.Features, nil)
		return &Coordinates{Points: Points{Width: fitted.Width(), Values: values, Rows: d.Table.Rows}, Names: fitted.UnitNames(), LeftOut: []LeftOut{}}, nil
	case Raw:
		return standardized(d, missing)
	}
	return nil, fmt.Errorf("separate: unknown space %q (want encoded or raw)", space)
}

// Why the raw space leaves a feature column out (besides its kind, when it
// is not numeric).
const (
	constant   = "constant"
	tinySpread = "its spread is too small for a 64-bit float: the standard deviation rounds to 0"
)

// standardized returns the numeric feature columns of d as z-scores, and
// the feature columns it leaves out. With MissingDrop the rows with a
// missing cell in a numeric feature column are left out, and the means
// and deviations are those of the rows kept.
func standardized(d *tabular.Dataset, missing Missing) (*Coordinates, error) {
	rows := d.Table.Rows
	kept := make([]bool, rows)
	for r := range kept {
		kept[r] = true
	}
	dropped := false
	for _, col := range d.Features {
		if n := col.MissingCount(); n > 0 && col.Kind == tabular.Numeric {
			if missing != MissingDrop {
				first := slices.Index(col.Missing, true)
				return nil, &tabular.DataError{File: d.Table.Name, Row: first + 1, Column: position(d, col), Name: col.Name,
					Err: fmt.Errorf("the cell is missing (%d in the column); the raw space needs every cell: fill them in, --ignore the column, --missing drop to leave such rows out, or use the encoded space", n)}
			}
			for r, m := range col.Missing {
				if m {
					kept[r], dropped = false, true
				}
			}
		}
	}
	var keptRows []int
	for r, k := range kept {
		if k {
			keptRows = append(keptRows, r)
		}
	}
	if len(keptRows) == 0 {
		return nil, &tabular.DataError{File: d.Table.Name, Err: errors.New("every row has a missing cell in a numeric feature column, so --missing drop leaves none to check")}
	}
	c := &Coordinates{LeftOut: []LeftOut{}}
	values := make([]float64, len(keptRows))
	for _, col := range d.Features {
		if col.Kind != tabular.Numeric {
			c.LeftOut = append(c.LeftOut, LeftOut{col.Name, col.Kind.String()})
			continue
		}
		for i, r := range keptRows {
			values[i] = col.Numbers[r]
		}
		mean, sd := stat.MeanStdDev(values, nil)
		if math.IsInf(sd, 0) || math.IsNaN(sd) {
			return nil, &tabular.DataError{File: d.Table.Name, Column: position(d, col), Name: col.Name, Err: errors.New("the values span more than a 64-bit float holds, which standardizing cannot scale; rescale the column, --ignore it, or use the encoded space")}
		}
		if !(sd > 0) { // no direction to separate along
			reason := constant
			if slices.Min(values) != slices.Max(values) {
				reason = tinySpread
			}
			c.LeftOut = append(c.LeftOut, LeftOut{col.Name, reason})
			continue
		}
		c.columns, c.Names = append(c.columns, col), append(c.Names, col.Name)
		c.Scales = append(c.Scales, ColumnScale{Column: col.Name, Mean: mean, SD: sd})
	}
	if len(c.Names) == 0 {
		return nil, &tabular.DataError{File: d.Table.Name, Err: fmt.Errorf(
			"no numeric feature column varies, so the raw space has nothing to compare (use the encoded space); left out: %s", LeftOutList(c.LeftOut))}
	}
	width := len(c.columns)
	c.Points = Points{Width: width, Values: make([]float64, rows*width)}
	for _, r := range keptRows {
		for j, col := range c.columns {
			c.Points.Values[r*width+j] = (col.Numbers[r] - c.Scales[j].Mean) / c.Scales[j].SD
		}
	}
	if dropped {
		c.Kept = kept
	}
	return c, nil
}

// position is the 1-based position of col in d's table, 0 when it is not
// one of its columns.
func position(d *tabular.Dataset, col *tabular.Column) int {
	return slices.Index(d.Table.Columns, col) + 1
}

// inDataUnits adds to a split's proof the values in the data's own units:
// the certificate's rows and common point (the raw columns' cells, or the
// encoded units), and, in the raw space, the witness in the columns' units.
func (c *Coordinates) inDataUnits(s *Split) {
	if cert := s.Certificate; cert != nil {
		cert.Values = make([][]float64, len(cert.Rows))
		point := make([]float64, c.Points.Width)
		for i, row := range cert.Rows {
			cert.Values[i] = c.dataRow(row - 1)
			if cert.Positive[i] {
				for j, v := range cert.Values[i] {
					point[j] += cert.Weights[i] * v
				}
			}
		}
		cert.Point = point
	}
	if w := s.Witness; w != nil && c.Scales != nil {
		w.DataWeights = make([]float64, len(w.Weights))
		bias := w.Bias
		for j, v := range w.Weights {
			w.DataWeights[j] = v / c.Scales[j].SD
			bias -= v * c.Scales[j].Mean / c.Scales[j].SD
		}
		w.DataBias = &bias
	}
}

// dataRow is row r in the data's units.
func (c *Coordinates) dataRow(r int) []float64 {
	if c.columns == nil {
		return slices.Clone(c.Points.Row(r))
	}
	values := make([]float64, len(c.columns))
	for j, col := range c.columns {
		values[j] = col.Numbers[r]
	}
	return values
}

// LeftOutList lists left-out columns with their reasons, "a (constant); b
// (…)", grouping the columns that share a reason.
func LeftOutList(leftOut []LeftOut) string {
	var reasons []string
	columns := map[string][]string{}
	for _, l := range leftOut {
		if columns[l.Reason] == nil {
			reasons = append(reasons, l.Reason)
		}
		columns[l.Reason] = append(columns[l.Reason], l.Column)
	}
	items := make([]string, len(reasons))
	for i, reason := range reasons {
		items[i] = fmt.Sprintf("%s (%s)", strings.Join(columns[reason], ", "), reason)
	}
	return strings.Join(items, "; ")
}
