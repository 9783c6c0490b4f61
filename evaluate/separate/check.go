package separate

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/stat"

	"deltafit/fit"
	"deltafit/ingest"
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
	Space Space              // default Encoded
	Plan  ingest.PlanOptions // the encoding, for the encoded space
	Pairs bool               // also check each pair of classes
	Seed  uint64             // see Options.Seed
	// Groups is how many conflicting groups to list (default
	// DefaultGroups; negative lists none).
	Groups int
}

// Report is what Check finds.
type Report struct {
	Space     Space     `json:"space"`
	Inputs    []string  `json:"inputs"` // names of the coordinates, in order
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
func Check(d *ingest.Dataset, opts CheckOptions) (*Report, error) {
	if opts.Space == "" {
		opts.Space = Encoded
	}
	if opts.Groups == 0 {
		opts.Groups = DefaultGroups
	}
	p, names, err := Coordinates(d, opts.Space, opts.Plan)
	if err != nil {
		return nil, err
	}
	r := &Report{
		Space:     opts.Space,
		Inputs:    names,
		Conflicts: FindConflicts(p, d.Classes, d.Labels, max(opts.Groups, 0)),
		Profile:   NewProfile(d),
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
	for _, s := range splits {
		res, err := Separate(p, s[0].rows, s[1].rows, Options{Seed: opts.Seed})
		if err != nil {
			return nil, fmt.Errorf("separate: %s against %s: %w", s[0].name, s[1].name, err)
		}
		r.Splits = append(r.Splits, newSplit(s[0].name, s[1].name, len(s[0].rows)+len(s[1].rows), res))
	}
	return r, nil
}

func newSplit(positive, negative string, rows int, res *Result) Split {
	s := Split{
		Positive: positive, Negative: negative, Verdict: res.Verdict, Reason: res.Reason, Rows: rows,
		Distance: res.Distance, Certificate: res.Certificate, Witness: res.Witness,
	}
	if res.Verdict != Undecided {
		separable := res.Verdict == Separable
		s.Separable = &separable
	}
	return s
}

// Coordinates returns the rows of d in the given space, with the names of
// the coordinates.
func Coordinates(d *ingest.Dataset, space Space, plan ingest.PlanOptions) (fit.Patterns, []string, error) {
	switch space {
	case Encoded:
		fitted, err := ingest.FitPlan(d.Features, nil, plan)
		if err != nil {
			return fit.Patterns{}, nil, err
		}
		values, _ := fitted.EncodeTo(nil, d.Features, nil)
		return fit.Patterns{Width: fitted.Width(), Values: values, Rows: d.Table.Rows}, fitted.UnitNames(), nil
	case Raw:
		return standardized(d)
	}
	return fit.Patterns{}, nil, fmt.Errorf("separate: unknown space %q (want encoded or raw)", space)
}

// standardized returns the numeric feature columns of d as z-scores.
func standardized(d *ingest.Dataset) (fit.Patterns, []string, error) {
	var cols []*ingest.Column
	var names []string
	var centers, scales []float64
	for _, col := range d.Features {
		if col.Kind != ingest.Numeric {
			continue
		}
		if n := col.MissingCount(); n > 0 {
			first := slices.Index(col.Missing, true)
			return fit.Patterns{}, nil, &ingest.DataError{File: d.Table.Name, Row: first + 1, Name: col.Name,
				Err: fmt.Errorf("the cell is missing (%d in the column); the raw space needs every cell: fill them in, --ignore the column, or use the encoded space", n)}
		}
		mean, sd := stat.MeanStdDev(col.Numbers, nil)
		if math.IsInf(sd, 0) || math.IsNaN(sd) {
			return fit.Patterns{}, nil, &ingest.DataError{File: d.Table.Name, Name: col.Name,
				Err: fmt.Errorf("the values span more than a 64-bit float holds, which standardizing cannot scale; rescale the column, --ignore it, or use the encoded space")}
		}
		if !(sd > 0) {
			continue // constant: no direction to separate along
		}
		cols, names = append(cols, col), append(names, col.Name)
		centers, scales = append(centers, mean), append(scales, sd)
	}
	if len(names) == 0 {
		return fit.Patterns{}, nil, &ingest.DataError{File: d.Table.Name, Err: fmt.Errorf("no numeric feature column varies; the raw space has nothing to compare (use the encoded space)")}
	}
	rows := d.Table.Rows
	values := make([]float64, 0, rows*len(cols))
	for r := 0; r < rows; r++ {
		for j, col := range cols {
			values = append(values, (col.Numbers[r]-centers[j])/scales[j])
		}
	}
	return fit.Patterns{Width: len(cols), Values: values}, names, nil
}
