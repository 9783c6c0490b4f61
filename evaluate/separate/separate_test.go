package separate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"deltafit/ingest/tabular"
	"deltafit/internal/fixture"
)

// readDataset reads a reference table from the repository's testdata.
func readDataset(t *testing.T, name, target string) *tabular.Dataset {
	t.Helper()
	return fixture.TestdataDataset(t, name, target)
}

// split returns the rows of class positive and of every other class.
func split(classes []int, positive int) (pos, neg []int) {
	for r, c := range classes {
		if c == positive {
			pos = append(pos, r)
		} else {
			neg = append(neg, r)
		}
	}
	return pos, neg
}

// separateClasses runs Separate on class 1 against class 0 and fails the
// test unless the verdict is want.
func separateClasses(t *testing.T, p Points, classes []int, want Verdict) *Result {
	t.Helper()
	pos, neg := split(classes, 1)
	res, err := Separate(context.Background(), p, pos, neg, Options{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if res.Verdict != want {
		t.Fatalf("verdict %q (%s), want %q", res.Verdict, res.Reason, want)
	}
	return res
}

// truthTable reads the columns x1, x2 of a truth table as they are.
func truthTable(t *testing.T, name string) (Points, []int) {
	d := readDataset(t, name, "y")
	x1, x2 := d.Table.Column("x1").Numbers, d.Table.Column("x2").Numbers
	var values []float64
	for i := range x1 {
		values = append(values, x1[i], x2[i])
	}
	return Points{Width: 2, Values: values}, d.Classes
}

func TestTruthTables(t *testing.T) {
	for _, tc := range []struct {
		name    string
		file    string
		verdict Verdict
	}{
		{"xor not separable", "xor.csv", NotSeparable}, // Minsky & Papert 1969
		{"and separable", "and.csv", Separable},        // Minsky & Papert 1969
		{"or separable", "or.csv", Separable},          // Minsky & Papert 1969
	} {
		t.Run(tc.name, func(t *testing.T) {
			p, classes := truthTable(t, tc.file)
			res := separateClasses(t, p, classes, tc.verdict)
			if tc.verdict == Separable {
				// The witness classifies all four rows: recomputed here.
				w := res.Witness
				for r, c := range classes {
					score := w.Bias + w.Weights[0]*p.Row(r)[0] + w.Weights[1]*p.Row(r)[1]
					if (score > 0) != (c == 1) || score == 0 {
						t.Errorf("row %d (class %d) scores %g", r+1, c, score)
					}
				}
				return
			}
			// Hand algebra: ½(0,1) + ½(1,0) = ½(0,0) + ½(1,1) = (½,½); rows 2, 3
			// are y=1 and rows 1, 4 are y=0 (xor.csv), and the hull
			// intersection is that single point, so the weights are unique.
			c := res.Certificate
			if !slices.Equal(c.Rows, []int{2, 3, 1, 4}) || !slices.Equal(c.Positive, []bool{true, true, false, false}) {
				t.Fatalf("certificate rows %v sides %v, want [2 3 1 4] [true true false false]", c.Rows, c.Positive)
			}
			for i, w := range c.Weights {
				if math.Abs(w-0.5) > 1e-12 { // simplex rounding on 0/1 data
					t.Errorf("weight of row %d = %v, want 1/2", c.Rows[i], w)
				}
			}
		})
	}
}

func TestIrisRawSpace(t *testing.T) {
	d := readDataset(t, "iris.csv", "species")
	r, err := Check(context.Background(), d, CheckOptions{Space: Raw, Pairs: true, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	// UCI iris.names: "one class is linearly separable from the other 2; the
	// latter are not linearly separable from each other".
	want := map[[2]string]Verdict{
		{"setosa", Rest}:            Separable,
		{"versicolor", "virginica"}: NotSeparable,
		{"setosa", "versicolor"}:    Separable,
		{"setosa", "virginica"}:     Separable,
	}
	found := 0
	for _, s := range r.Splits {
		v, ok := want[[2]string{s.Positive, s.Negative}]
		if !ok {
			continue
		}
		found++
		t.Run(s.Positive+" vs "+s.Negative, func(t *testing.T) {
			if s.Verdict != v {
				t.Fatalf("verdict %q (%s), want %q", s.Verdict, s.Reason, v)
			}
			if v == NotSeparable && len(s.Certificate.Rows) > len(r.Inputs)+2 {
				t.Errorf("certificate has %d rows, more than D+2 = %d (Carathéodory)", len(s.Certificate.Rows), len(r.Inputs)+2)
			}
		})
	}
	if found != len(want) {
		t.Fatalf("found %d of the %d expected splits in %d", found, len(want), len(r.Splits))
	}
}

// planted returns n points uniform in [−1,1]^dim labelled by a random
// hyperplane, keeping only points at least gap from it, and the scores
// w·x+b of the hyperplane (w of unit length).
func planted(n, dim int, gap float64, seed uint64) (Points, []int, []float64) {
	rng := rand.New(rand.NewPCG(seed, 1))
	w := make([]float64, dim)
	norm := 0.0
	for j := range w {
		w[j] = rng.NormFloat64()
		norm += w[j] * w[j]
	}
	for j := range w {
		w[j] /= math.Sqrt(norm)
	}
	bias := 0.1
	p := Points{Width: dim}
	var classes []int
	var scores []float64
	x := make([]float64, dim)
	for len(classes) < n {
		score := bias
		for j := range x {
			x[j] = 2*rng.Float64() - 1
			score += w[j] * x[j]
		}
		if math.Abs(score) < gap {
			continue
		}
		p.Values = append(p.Values, x...)
		scores = append(scores, score)
		c := 0
		if score > 0 {
			c = 1
		}
		classes = append(classes, c)
	}
	return p, classes, scores
}

func TestPlantedHyperplane(t *testing.T) {
	// Mathematical fact: points at distance ≥ 0.1 from a hyperplane are
	// separated by it; flipping one label makes its hulls meet exactly when a
	// certificate exists, and any certificate must use the flipped row, since
	// the other rows are separated by the planted hyperplane.
	for _, size := range []struct {
		name string
		rows int
	}{
		{"whole program", 300},
		{"working set", 2 * wholeProgram},
	} {
		p, classes, scores := planted(size.rows, 5, 0.1, 7)
		t.Run(size.name+"/separable", func(t *testing.T) {
			res := separateClasses(t, p, classes, Separable)
			if res.Witness.Rows != len(classes) {
				t.Errorf("witness checked %d rows, want %d", res.Witness.Rows, len(classes))
			}
		})
		t.Run(size.name+"/one label flipped deep inside", func(t *testing.T) {
			deepest := 0 // the positive row farthest from the planted hyperplane
			for r, s := range scores {
				if s > scores[deepest] {
					deepest = r
				}
			}
			flipped := slices.Clone(classes)
			flipped[deepest] = 0
			res := separateClasses(t, p, flipped, NotSeparable)
			if !slices.Contains(res.Certificate.Rows, deepest+1) {
				t.Errorf("certificate rows %v do not include the flipped row %d", res.Certificate.Rows, deepest+1)
			}
		})
	}
}

func TestNovikoffBound(t *testing.T) {
	// Novikoff 1962: on data separated with margin γ by a unit vector, in
	// the space x̃ = (x, 1) where every ‖x̃‖ ≤ R, the error-correction
	// procedure makes at most (R/γ)² corrections.
	for _, tc := range []struct {
		name string
		seed uint64
		gap  float64
	}{
		{"wide gap", 3, 0.3},
		{"narrow gap", 4, 0.05},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p, classes, _ := planted(200, 4, tc.gap, tc.seed)
			w := separateClasses(t, p, classes, Separable).Witness
			aug := append(slices.Clone(w.Weights), w.Bias)
			norm := math.Sqrt(dot(aug, aug))
			radius, gamma := 0.0, math.Inf(1)
			for r, c := range classes {
				x := append(slices.Clone(p.Row(r)), 1)
				radius = max(radius, math.Sqrt(dot(x, x)))
				y := float64(2*c - 1)
				gamma = min(gamma, y*dot(aug, x)/norm)
			}
			mistakes := perceptronMistakes(p, classes)
			if bound := (radius / gamma) * (radius / gamma); float64(mistakes) > bound {
				t.Errorf("%d corrections, over the bound (R/γ)² = %.1f", mistakes, bound)
			}
		})
	}
}

// perceptronMistakes trains a threshold unit by error correction, w += y·x̃
// on each misclassified row, cycling until a pass makes no correction, and
// returns the number of corrections.
func perceptronMistakes(p Points, classes []int) int {
	w := make([]float64, p.Width+1)
	mistakes := 0
	for changed := true; changed; {
		changed = false
		for r, c := range classes {
			x := append(slices.Clone(p.Row(r)), 1)
			y := float64(2*c - 1)
			if y*dot(w, x) <= 0 {
				for j := range w {
					w[j] += y * x[j]
				}
				mistakes++
				changed = true
			}
		}
	}
	return mistakes
}

func TestConflicts(t *testing.T) {
	// Hand count: rows 1-2 and 3-4 are two pairs with one pattern and two
	// classes, so any classifier errs on at least one row of each pair:
	// floor = 2/N with N = 6.
	table := &tabular.Table{Name: "conflicts", Rows: 6, Columns: []*tabular.Column{
		{Name: "colour", Kind: tabular.Categorical, Text: []string{"red", "red", "blue", "blue", "green", "grey"}},
		{Name: "y", Kind: tabular.Categorical, Text: []string{"a", "b", "a", "b", "a", "b"}},
	}}
	d, err := tabular.NewDataset(table, "y", nil)
	if err != nil {
		t.Fatal(err)
	}
	r, err := Check(context.Background(), d, CheckOptions{})
	if err != nil {
		t.Fatal(err)
	}
	c := r.Conflicts
	if c.Count != 2 || c.MinErrors != 2 || math.Abs(c.ErrorFloor-2.0/6) > 1e-15 { // exact ratio, one division
		t.Errorf("conflicts %d, min errors %d, floor %v; want 2, 2, 1/3", c.Count, c.MinErrors, c.ErrorFloor)
	}
	if len(c.Groups) != 2 || !slices.Equal(c.Groups[0].Rows, []int{1, 2}) || !slices.Equal(c.Groups[1].Rows, []int{3, 4}) {
		t.Errorf("groups %+v, want rows [1 2] and [3 4]", c.Groups)
	}
	// A shared pattern is its own two-row certificate.
	s := r.Splits[0]
	if s.Verdict != NotSeparable || !slices.Equal(s.Certificate.Rows, []int{2, 1}) {
		t.Errorf("split %+v, want not separable with certificate rows [2 1]", s)
	}
}

func TestProfile(t *testing.T) {
	d := readDataset(t, "iris.csv", "species")
	p := NewProfile(d, DefaultGroups)
	// UCI iris.names: 150 instances, 50 in each of three classes.
	if p.Rows != 150 || len(p.Classes) != 3 || p.Imbalance != 1 {
		t.Errorf("rows %d, classes %+v, imbalance %v; want 150, 50 each, 1", p.Rows, p.Classes, p.Imbalance)
	}
	// UCI iris.names: no missing attribute values; no constant column.
	if len(p.Missing) != 0 || len(p.Constant) != 0 {
		t.Errorf("missing %+v constant %+v, want none", p.Missing, p.Constant)
	}
	// Fisher 1936 data (from memory): setosa petals are 1.0-1.9 long and
	// 0.1-0.6 wide, the other species' at least 3.0 and 1.0, so each petal
	// column alone splits setosa off; no sepal column does.
	want := []Separator{
		{Column: "petal_length", Class: "setosa", How: "threshold", Rows: 150, ClassBelow: true, ClassEdge: 1.9, RestEdge: 3},
		{Column: "petal_width", Class: "setosa", How: "threshold", Rows: 150, ClassBelow: true, ClassEdge: 0.6, RestEdge: 1},
	}
	if !slices.Equal(p.Separators, want) {
		t.Errorf("separators %+v, want %+v", p.Separators, want)
	}
}

func TestInputCap(t *testing.T) {
	// Worked by hand: the truth tables have 2 inputs in the raw space, over a
	// cap of 1; the conflicts table's colour column becomes 4 one-hot units,
	// and its rows 1 and 2 share a pattern across the classes.
	conflicting := &tabular.Table{Name: "conflicts", Rows: 4, Columns: []*tabular.Column{
		{Name: "colour", Kind: tabular.Categorical, Text: []string{"red", "red", "blue", "grey"}},
		{Name: "y", Kind: tabular.Categorical, Text: []string{"a", "b", "a", "b"}},
	}}
	shared, err := tabular.NewDataset(conflicting, "y", nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name   string
		d      *tabular.Dataset
		space  Space
		want   Verdict
		reason []string // phrases the reason must hold
	}{
		{"xor raw over the cap", readDataset(t, "xor.csv", "y"), Raw, TooManyInputs, []string{"2 inputs", "cap of 1", "--ignore"}},
		{"and raw over the cap", readDataset(t, "and.csv", "y"), Raw, TooManyInputs, []string{"2 inputs", "cap of 1", "--ignore"}},
		{"encoded over the cap", readDataset(t, "or.csv", "y"), Encoded, TooManyInputs, []string{"inputs vary on the rows of the split, over the cap of 1", "--numeric zscore", "thermometer:K", "--space raw"}},
		{"shared pattern still proves", shared, Encoded, NotSeparable, nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r, err := Check(context.Background(), tc.d, CheckOptions{Space: tc.space, Seed: 1, MaxInputs: 1})
			if err != nil {
				t.Fatal(err)
			}
			s := r.Splits[0]
			if s.Verdict != tc.want {
				t.Fatalf("verdict %q (%s), want %q", s.Verdict, s.Reason, tc.want)
			}
			if tc.want == TooManyInputs && (s.Separable != nil || s.Certificate != nil || s.Witness != nil) {
				t.Errorf("an unsolved split claims an answer: %+v", s)
			}
			for _, phrase := range tc.reason {
				if !strings.Contains(s.Reason, phrase) {
					t.Errorf("reason %q does not say %q", s.Reason, phrase)
				}
			}
		})
	}
}

// handTable builds a table of the given columns over rows; every column
// holds the same number of values.
func handTable(rows int, cols ...*tabular.Column) *tabular.Table {
	return &tabular.Table{Name: "hand", Rows: rows, Columns: cols}
}

func TestRawSpaceLeftOut(t *testing.T) {
	// Worked by hand: of the features only x is numeric and varies.
	table := handTable(4,
		&tabular.Column{Name: "colour", Kind: tabular.Categorical, Text: []string{"red", "red", "blue", "blue"}},
		&tabular.Column{Name: "flag", Kind: tabular.Boolean, Numbers: []float64{1, 0, 1, 0}},
		&tabular.Column{Name: "x", Kind: tabular.Numeric, Numbers: []float64{1, 2, 3, 4}},
		&tabular.Column{Name: "k", Kind: tabular.Numeric, Numbers: []float64{5, 5, 5, 5}},
		&tabular.Column{Name: "tiny", Kind: tabular.Numeric, Numbers: []float64{1e-320, 2e-320, 1e-320, 2e-320}},
		&tabular.Column{Name: "y", Kind: tabular.Categorical, Text: []string{"a", "a", "b", "b"}},
	)
	d, err := tabular.NewDataset(table, "y", nil)
	if err != nil {
		t.Fatal(err)
	}
	r, err := Check(context.Background(), d, CheckOptions{Space: Raw})
	if err != nil {
		t.Fatal(err)
	}
	want := []LeftOut{{"colour", "categorical"}, {"flag", "boolean"}, {"k", constant}, {"tiny", tinySpread}}
	if !slices.Equal(r.LeftOut, want) || !slices.Equal(r.Inputs, []string{"x"}) {
		t.Errorf("inputs %v, left out %+v; want [x], %+v", r.Inputs, r.LeftOut, want)
	}

	t.Run("nothing varies names the columns", func(t *testing.T) {
		d, err := tabular.NewDataset(table, "y", []string{"x"})
		if err != nil {
			t.Fatal(err)
		}
		_, err = Check(context.Background(), d, CheckOptions{Space: Raw})
		if err == nil {
			t.Fatal("no error")
		}
		for _, phrase := range []string{"no numeric feature column varies", "k (constant)", "tiny (its spread", "colour (categorical)"} {
			if !strings.Contains(err.Error(), phrase) {
				t.Errorf("error %q does not say %q", err, phrase)
			}
		}
	})
}

func TestRawSpaceErrorPosition(t *testing.T) {
	// Worked by hand: the column with the missing cell is the table's third.
	missing := &tabular.Column{Name: "x", Kind: tabular.Numeric, Numbers: []float64{1, 0, 3, 4}, Missing: []bool{false, true, false, false}}
	table := handTable(4,
		&tabular.Column{Name: "y", Kind: tabular.Categorical, Text: []string{"a", "a", "b", "b"}},
		&tabular.Column{Name: "w", Kind: tabular.Numeric, Numbers: []float64{1, 2, 3, 4}},
		missing,
	)
	d, err := tabular.NewDataset(table, "y", nil)
	if err != nil {
		t.Fatal(err)
	}
	_, err = Check(context.Background(), d, CheckOptions{Space: Raw})
	var de *tabular.DataError
	if !errors.As(err, &de) || de.Row != 2 || de.Column != 3 || de.Name != "x" {
		t.Fatalf("error %v, want a DataError at row 2, column 3 (x)", err)
	}
}

func TestDuplicateRows(t *testing.T) {
	t.Run("hand-made", func(t *testing.T) {
		// Worked by hand: rows 1, 3, 5 are one row three times and rows 4, 6
		// one row twice (3 repeats); rows 2 and 7 have row 1's features but
		// another class, a conflict, not a duplicate; row 8 matches row 4
		// except for a missing cell, which only matches a missing one.
		table := handTable(8,
			&tabular.Column{Name: "x", Kind: tabular.Numeric, Numbers: []float64{1, 1, 1, 3, 1, 3, 1, 0}, Missing: []bool{false, false, false, false, false, false, false, true}},
			&tabular.Column{Name: "c", Kind: tabular.Categorical, Text: []string{"red", "red", "red", "blue", "red", "blue", "red", "blue"}},
			&tabular.Column{Name: "y", Kind: tabular.Categorical, Text: []string{"p", "q", "p", "q", "p", "q", "q", "q"}},
		)
		d, err := tabular.NewDataset(table, "y", nil)
		if err != nil {
			t.Fatal(err)
		}
		p := NewProfile(d, DefaultGroups)
		// Rows 2 and 7 are also copies of each other (both q): 4 repeats.
		want := [][]int{{1, 3, 5}, {2, 7}, {4, 6}}
		if p.DuplicateRows != 4 || !slices.EqualFunc(p.DuplicateGroups, want, slices.Equal) {
			t.Errorf("duplicates %d in %v, want 4 in %v", p.DuplicateRows, p.DuplicateGroups, want)
		}
		if p := NewProfile(d, 1); p.DuplicateRows != 4 || len(p.DuplicateGroups) != 1 {
			t.Errorf("with one group listed: %d in %v, want 4 in one group", p.DuplicateRows, p.DuplicateGroups)
		}
	})
	t.Run("iris", func(t *testing.T) {
		// Fisher 1936 data (from memory): rows 102 and 143, both virginica
		// 5.8, 2.7, 5.1, 1.9, are the one repeated row.
		p := NewProfile(readDataset(t, "iris.csv", "species"), DefaultGroups)
		if p.DuplicateRows != 1 || !slices.EqualFunc(p.DuplicateGroups, [][]int{{102, 143}}, slices.Equal) {
			t.Errorf("duplicates %d in %v, want 1 in [[102 143]]", p.DuplicateRows, p.DuplicateGroups)
		}
	})
}

func TestBudget(t *testing.T) {
	// Iris raw (UCI iris.names): versicolor against the rest is not
	// separable, and the error-correction passes cannot settle it, so the
	// simplex must pivot: with too small a budget the split is undecided,
	// and says what it learned; the same budget gives the same result.
	d := readDataset(t, "iris.csv", "species")
	full, err := Check(context.Background(), d, CheckOptions{Space: Raw, Split: [2]string{"versicolor", Rest}, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	needed := full.Splits[0].Pivots
	if full.Splits[0].Verdict != NotSeparable || needed < 2 {
		t.Fatalf("verdict %s after %d pivots, want not separable after at least 2", full.Splits[0].Verdict, needed)
	}
	short := CheckOptions{Space: Raw, Split: [2]string{"versicolor", Rest}, Seed: 1, Budget: needed - 1}
	a, err := Check(context.Background(), d, short)
	if err != nil {
		t.Fatal(err)
	}
	s := a.Splits[0]
	if s.Verdict != OutOfBudget || s.Separable != nil || s.Certificate != nil || s.Pivots != needed-1 {
		t.Fatalf("split %+v, want undecided (budget) after %d pivots, no proof", s, needed-1)
	}
	for _, phrase := range []string{"budget of", "--budget", "misplaces", "apart (L1 norm"} {
		if !strings.Contains(s.Reason, phrase) {
			t.Errorf("reason %q does not say %q", s.Reason, phrase)
		}
	}
	b, _ := Check(context.Background(), d, short)
	if b.Splits[0].Reason != s.Reason {
		t.Errorf("the same budget gave %q, then %q", s.Reason, b.Splits[0].Reason)
	}
	exactly, _ := Check(context.Background(), d, CheckOptions{Space: Raw, Split: [2]string{"versicolor", Rest}, Seed: 1, Budget: needed})
	if exactly.Splits[0].Verdict != NotSeparable {
		t.Errorf("with a budget of exactly %d pivots: %s", needed, exactly.Splits[0].Verdict)
	}
}

func TestTimeout(t *testing.T) {
	// A context that has ended: every split not settled by a pattern on
	// both sides is undecided (timeout), with no proof.
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	d := readDataset(t, "iris.csv", "species")
	r, err := Check(ctx, d, CheckOptions{Space: Raw, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range r.Splits {
		if s.Verdict != OutOfTime || s.Separable != nil {
			t.Errorf("%s: %s, want undecided (timeout)", s.Positive, s.Verdict)
		}
	}
}

func TestSplitChoice(t *testing.T) {
	d := readDataset(t, "iris.csv", "species")
	for _, tc := range []struct {
		name     string
		opts     CheckOptions
		want     [][2]string
		err      string
		verdicts []Verdict
	}{
		// UCI iris.names: versicolor and virginica are not separable.
		{"one pair", CheckOptions{Split: [2]string{"versicolor", "virginica"}}, [][2]string{{"versicolor", "virginica"}}, "", []Verdict{NotSeparable}},
		{"one against the rest", CheckOptions{Split: [2]string{"setosa", Rest}}, [][2]string{{"setosa", Rest}}, "", []Verdict{Separable}},
		{"positive turns a pair", CheckOptions{Split: [2]string{"versicolor", "virginica"}, Positive: "virginica"}, [][2]string{{"virginica", "versicolor"}}, "", nil},
		{"positive in the pairs", CheckOptions{Pairs: true, Positive: "virginica"}, [][2]string{
			{"setosa", Rest}, {"versicolor", Rest}, {"virginica", Rest}, {"setosa", "versicolor"}, {"virginica", "setosa"}, {"virginica", "versicolor"}}, "", nil},
		{"unknown class", CheckOptions{Split: [2]string{"rose", Rest}}, nil, `"rose" is not a class of species`, nil},
		{"same class twice", CheckOptions{Split: [2]string{"setosa", "setosa"}}, nil, "same class on both sides", nil},
		{"positive not a side", CheckOptions{Split: [2]string{"setosa", "versicolor"}, Positive: "virginica"}, nil, "not a side", nil},
	} {
		t.Run(tc.name, func(t *testing.T) {
			tc.opts.Space, tc.opts.Seed = Raw, 1
			r, err := Check(context.Background(), d, tc.opts)
			if tc.err != "" {
				if err == nil || !strings.Contains(err.Error(), tc.err) {
					t.Fatalf("error %v, want one saying %q", err, tc.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			var got [][2]string
			for i, s := range r.Splits {
				got = append(got, [2]string{s.Positive, s.Negative})
				if tc.verdicts != nil && s.Verdict != tc.verdicts[i] {
					t.Errorf("%s against %s: %s, want %s", s.Positive, s.Negative, s.Verdict, tc.verdicts[i])
				}
			}
			if !slices.Equal(got, tc.want) {
				t.Errorf("splits %v, want %v", got, tc.want)
			}
		})
	}
	t.Run("two classes", func(t *testing.T) {
		// xor.csv: labels 0 and 1; by default 1 is positive.
		xor := readDataset(t, "xor.csv", "y")
		for positive, want := range map[string]string{"": "1", "1": "1", "0": "0"} {
			r, err := Check(context.Background(), xor, CheckOptions{Positive: positive})
			if err != nil {
				t.Fatal(err)
			}
			if s := r.Splits[0]; s.Positive != want || len(r.Splits) != 1 {
				t.Errorf("--positive %q: %s against %s, want %s positive", positive, s.Positive, s.Negative, want)
			}
		}
	})
}

func TestMissingDrop(t *testing.T) {
	// Worked by hand: rows 2 and 4 have a missing x; with MissingDrop they
	// are left out, the other rows keep their numbers, and the mean and sd
	// are those of rows 1, 3, 5, 6 (x = 1, 3, 5, 6: mean 3.75).
	table := handTable(6,
		&tabular.Column{Name: "x", Kind: tabular.Numeric, Numbers: []float64{1, 0, 3, 0, 5, 6}, Missing: []bool{false, true, false, true, false, false}},
		&tabular.Column{Name: "y", Kind: tabular.Categorical, Text: []string{"a", "b", "a", "a", "b", "b"}},
	)
	d, err := tabular.NewDataset(table, "y", nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Check(context.Background(), d, CheckOptions{Space: Raw}); err == nil || !strings.Contains(err.Error(), "--missing drop") {
		t.Fatalf("refusing: error %v, want one suggesting --missing drop", err)
	}
	r, err := Check(context.Background(), d, CheckOptions{Space: Raw, Missing: MissingDrop})
	if err != nil {
		t.Fatal(err)
	}
	if r.Dropped.Count != 2 || !slices.Equal(r.Dropped.Rows, []int{2, 4}) {
		t.Errorf("dropped %+v, want rows 2 and 4", r.Dropped)
	}
	if len(r.Scales) != 1 || r.Scales[0].Mean != 3.75 {
		t.Errorf("scales %+v, want the mean of 1, 3, 5, 6 (3.75)", r.Scales)
	}
	// x ≤ 3 is class a (rows 1, 3), x ≥ 5 class b (rows 5, 6): separable,
	// checked on the 4 rows kept.
	s := r.Splits[0]
	if s.Verdict != Separable || s.Rows != 4 || s.Witness.Rows != 4 {
		t.Errorf("split %+v, want separable on 4 rows", s)
	}
	if _, err := Check(context.Background(), d, CheckOptions{Missing: MissingDrop}); err == nil {
		t.Error("MissingDrop in the encoded space: no error")
	}
}

func TestCertificateReduction(t *testing.T) {
	// Hand algebra: in one dimension, 0 and 2 (positive) and 1 (negative):
	// ½·0 + ½·2 = 1. Padding the positive side with 0.5 and 1.5 at weights
	// that keep the mean at 1 gives a valid certificate of 5 rows whose
	// columns are dependent; the reduction must leave an independent
	// support of at most inputs + 2 = 3 rows, still valid.
	p := Points{Width: 1, Values: []float64{0, 2, 0.5, 1.5, 1}}
	big := &Certificate{Rows: []int{1, 2, 3, 4, 5}, Positive: []bool{true, true, true, true, false}, Weights: []float64{0.25, 0.25, 0.25, 0.25, 1}}
	if _, err := VerifyCertificate(p, []int{0, 1, 2, 3}, []int{4}, big); err != nil {
		t.Fatalf("the padded certificate: %v", err)
	}
	c := reduceCertificate(p, []int{0}, big)
	if len(c.Rows) > 3 || !c.Minimal {
		t.Fatalf("reduced to rows %v (minimal %v), want at most 3, minimal", c.Rows, c.Minimal)
	}
	if _, err := VerifyCertificate(p, []int{0, 1, 2, 3}, []int{4}, c); err != nil {
		t.Errorf("the reduced certificate %+v: %v", c, err)
	}
}

func TestProgress(t *testing.T) {
	// Each split is announced, then reported with its result, in order.
	d := readDataset(t, "iris.csv", "species")
	var events []string
	_, err := Check(context.Background(), d, CheckOptions{Space: Raw, Seed: 1, Progress: func(p Progress) {
		state := "start"
		if p.Result != nil {
			state = string(p.Result.Verdict)
		}
		events = append(events, fmt.Sprintf("%d/%d %s %s", p.Index+1, p.Total, p.Positive, state))
	}})
	if err != nil {
		t.Fatal(err)
	}
	// UCI iris.names: setosa separable, the other two not.
	want := []string{"1/3 setosa start", "1/3 setosa separable", "2/3 versicolor start", "2/3 versicolor not separable", "3/3 virginica start", "3/3 virginica not separable"}
	if !slices.Equal(events, want) {
		t.Errorf("events %v, want %v", events, want)
	}
}

func TestShrinkCertificate(t *testing.T) {
	// Worked by hand: in the plane, rows 1-4 are XOR (rows 1, 4 positive at
	// (0,0), (1,1); rows 2, 3 negative at (0,1), (1,0)), and rows 5-8 an
	// XOR of side 2 far away. Both halves, and mixed pairs of segments such
	// as (0,0)-(10,10) against (0,1)-(12,10), are certificates of 4 rows.
	// Handed an 8-row certificate of both halves, the search must find one
	// of 4 rows among the nearest rows of the heaviest row.
	p := Points{Width: 2, Values: []float64{
		0, 0, 0, 1, 1, 0, 1, 1, // rows 1-4
		10, 10, 12, 10, 10, 12, 12, 12, // rows 5-8: 5, 8 positive; 6, 7 negative
	}}
	pos, neg := []int{0, 3, 4, 7}, []int{1, 2, 5, 6}
	big := &Certificate{Rows: []int{1, 4, 5, 8, 2, 3, 6, 7}, Positive: []bool{true, true, true, true, false, false, false, false},
		Weights: []float64{0.3, 0.3, 0.2, 0.2, 0.3, 0.3, 0.2, 0.2}}
	if _, err := VerifyCertificate(p, pos, neg, big); err != nil {
		t.Fatalf("the padded certificate: %v", err)
	}
	budget := &pivotBudget{limit: 100}
	c := shrinkCertificate(context.Background(), p, []int{0, 1}, pos, neg, big, budget, 1)
	if len(c.Rows) > 4 || !c.Minimal {
		t.Fatalf("rows %v (minimal %v), want at most 4, minimal", c.Rows, c.Minimal)
	}
	if _, err := VerifyCertificate(p, pos, neg, c); err != nil {
		t.Errorf("the smaller certificate %+v: %v", c, err)
	}
	if budget.pivots == 0 || budget.pivots > 100 {
		t.Errorf("%d pivots counted against a budget of 100", budget.pivots)
	}
}
