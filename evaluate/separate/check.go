package separate

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat"

	"deltafit/fit"
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

// DefaultGroups is how many conflicting groups a report lists by default.
const DefaultGroups = 10

// CheckOptions chooses what Check examines. The zero value checks each
// class against the rest in the encoded space of the default plan.
type CheckOptions struct {
	Space Space          // default Encoded
	Plan  encode.Options // the encoding, for the encoded space
	Pairs bool           // also check each pair of classes
	Seed  uint64         // see Options.Seed
	// Groups is how many conflicting and duplicate groups to list
	// (default DefaultGroups; negative lists none).
	Groups int
	// MaxInputs is Options.MaxInputs (default MaxInputs).
	MaxInputs int
	// Progress, if not nil, is told after each split is decided how many
	// of how many are.
	Progress func(done, total int)
}

// Report is what Check finds.
type Report struct {
	Space  Space    `json:"space"`
	Inputs []string `json:"inputs"` // names of the coordinates, in order
	// LeftOut lists the feature columns the raw space leaves out, and why
	// (none in the encoded space).
	LeftOut   []LeftOut `json:"space_left_out"`
	Splits    []Split   `json:"splits"`
	Conflicts Conflicts `json:"conflicts"`
	Profile   Profile   `json:"profile"`
}

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
	Certificate *Certificate `json:"certificate,omitempty"`
	Witness     *Witness     `json:"witness,omitempty"`
}

// Rest names the negative side of a one-against-the-rest split.
const Rest = "rest"

// Check profiles d, finds conflicting rows and decides, with verified
// proofs, which splits of its classes a hyperplane can make. With two
// classes there is one split, Labels[1] against Labels[0]; with more, each
// class against the rest and, with Pairs, each pair of classes.
func Check(d *tabular.Dataset, opts CheckOptions) (*Report, error) {
	if opts.Space == "" {
		opts.Space = Encoded
	}
	if opts.Groups == 0 {
		opts.Groups = DefaultGroups
	}
	p, names, leftOut, err := Coordinates(d, opts.Space, opts.Plan)
	if err != nil {
		return nil, err
	}
	r := &Report{
		Space:     opts.Space,
		Inputs:    names,
		LeftOut:   leftOut,
		Conflicts: FindConflicts(p, d.Classes, d.Labels, max(opts.Groups, 0)),
		Profile:   NewProfile(d, max(opts.Groups, 0)),
	}
	byClass := make([][]int, len(d.Labels))
	for row, c := range d.Classes {
		byClass[c] = append(byClass[c], row)
	}
	type side struct {
		name string
		rows []int
	}
	var splits [][2]side
	if len(d.Labels) == 2 {
		splits = append(splits, [2]side{{d.Labels[1], byClass[1]}, {d.Labels[0], byClass[0]}})
	} else {
		for k, label := range d.Labels {
			var rest []int
			for row, c := range d.Classes {
				if c != k {
					rest = append(rest, row)
				}
			}
			splits = append(splits, [2]side{{label, byClass[k]}, {Rest, rest}})
		}
		for i := 0; opts.Pairs && i < len(d.Labels); i++ {
			for j := i + 1; j < len(d.Labels); j++ {
				splits = append(splits, [2]side{{d.Labels[i], byClass[i]}, {d.Labels[j], byClass[j]}})
			}
		}
	}
	for i, s := range splits {
		if i > 0 && opts.Progress != nil {
			opts.Progress(i, len(splits))
		}
		res, err := Separate(p, s[0].rows, s[1].rows, Options{Seed: opts.Seed, MaxInputs: opts.MaxInputs})
		if err != nil {
			return nil, fmt.Errorf("separate: %s against %s: %w", s[0].name, s[1].name, err)
		}
		if res.Verdict == TooManyInputs {
			res.Reason += "; " + fewerInputs[opts.Space]
		}
		r.Splits = append(r.Splits, newSplit(s[0].name, s[1].name, len(s[0].rows)+len(s[1].rows), res))
	}
	if opts.Progress != nil {
		opts.Progress(len(splits), len(splits))
	}
	return r, nil
}

// fewerInputs says, for each space, how to bring the inputs under the cap.
var fewerInputs = map[Space]string{
	Encoded: "use fewer feature columns (--ignore), one unit per numeric column (--numeric zscore or threshold) or a smaller thermometer:K, or --space raw",
	Raw:     "use fewer numeric columns (--ignore)",
}

func newSplit(positive, negative string, rows int, res *Result) Split {
	s := Split{
		Positive: positive, Negative: negative, Verdict: res.Verdict, Reason: res.Reason, Rows: rows,
		Distance: res.Distance, Certificate: res.Certificate, Witness: res.Witness,
	}
	if res.Verdict == Separable || res.Verdict == NotSeparable {
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

// Coordinates returns the rows of d in the given space, with the names of
// the coordinates and, in the raw space, the feature columns left out.
func Coordinates(d *tabular.Dataset, space Space, plan encode.Options) (fit.Patterns, []string, []LeftOut, error) {
	switch space {
	case Encoded:
		fitted, err := encode.FitPlan(d.Features, nil, plan)
		if err != nil {
			return fit.Patterns{}, nil, nil, err
		}
		values, _ := fitted.EncodeTo(nil, d.Features, nil)
		return fit.Patterns{Width: fitted.Width(), Values: values, Rows: d.Table.Rows}, fitted.UnitNames(), []LeftOut{}, nil
	case Raw:
		return standardized(d)
	}
	return fit.Patterns{}, nil, nil, fmt.Errorf("separate: unknown space %q (want encoded or raw)", space)
}

// Why the raw space leaves a feature column out (besides its kind, when it
// is not numeric).
const (
	constant   = "constant"
	tinySpread = "its spread is too small for a 64-bit float: the standard deviation rounds to 0"
)

// standardized returns the numeric feature columns of d as z-scores, and
// the feature columns it leaves out.
func standardized(d *tabular.Dataset) (fit.Patterns, []string, []LeftOut, error) {
	var cols []*tabular.Column
	var names []string
	var centers, scales []float64
	leftOut := []LeftOut{}
	for _, col := range d.Features {
		if col.Kind != tabular.Numeric {
			leftOut = append(leftOut, LeftOut{col.Name, col.Kind.String()})
			continue
		}
		position := slices.Index(d.Table.Columns, col) + 1 // 0 (unknown) when col is not the table's
		if n := col.MissingCount(); n > 0 {
			first := slices.Index(col.Missing, true)
			return fit.Patterns{}, nil, nil, &tabular.DataError{File: d.Table.Name, Row: first + 1, Column: position, Name: col.Name,
				Err: fmt.Errorf("the cell is missing (%d in the column); the raw space needs every cell: fill them in, --ignore the column, or use the encoded space", n)}
		}
		mean, sd := stat.MeanStdDev(col.Numbers, nil)
		if math.IsInf(sd, 0) || math.IsNaN(sd) {
			return fit.Patterns{}, nil, nil, &tabular.DataError{File: d.Table.Name, Column: position, Name: col.Name, Err: errors.New("the values span more than a 64-bit float holds, which standardizing cannot scale; rescale the column, --ignore it, or use the encoded space")}
		}
		if !(sd > 0) { // no direction to separate along
			reason := constant
			if slices.Min(col.Numbers) != slices.Max(col.Numbers) {
				reason = tinySpread
			}
			leftOut = append(leftOut, LeftOut{col.Name, reason})
			continue
		}
		cols, names = append(cols, col), append(names, col.Name)
		centers, scales = append(centers, mean), append(scales, sd)
	}
	if len(names) == 0 {
		return fit.Patterns{}, nil, nil, &tabular.DataError{File: d.Table.Name, Err: fmt.Errorf(
			"no numeric feature column varies, so the raw space has nothing to compare (use the encoded space); left out: %s", LeftOutList(leftOut))}
	}
	rows := d.Table.Rows
	values := make([]float64, 0, rows*len(cols))
	for r := 0; r < rows; r++ {
		for j, col := range cols {
			values = append(values, (col.Numbers[r]-centers[j])/scales[j])
		}
	}
	return fit.Patterns{Width: len(cols), Values: values}, names, leftOut, nil
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
