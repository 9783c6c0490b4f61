package encode_test

import (
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"

	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
	"deltafit/internal/fixture"
)

// numericEncodings are every numeric encoding, parsed from its flag text.
var numericEncodings = []string{"thermometer", "thermometer:2", "thermometer:5", "onehot", "onehot:3", "threshold", "threshold:1.5", "zscore", "minmax", "hybrid", "hybrid:3"}

func mustNumeric(t testing.TB, s string) encode.Encoding {
	t.Helper()
	e, err := encode.ParseNumericEncoding(s)
	if err != nil {
		t.Fatal(err)
	}
	return e
}

func mustCategorical(t testing.TB, s string) encode.Encoding {
	t.Helper()
	e, err := encode.ParseCategoricalEncoding(s)
	if err != nil {
		t.Fatal(err)
	}
	return e
}

func fitPlan(t testing.TB, cols []*tabular.Column, rows []int, opts encode.Options) *encode.Plan {
	t.Helper()
	p, err := encode.FitPlan(cols, rows, opts)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// firstIrisRows reads the header and the first n rows of testdata/iris.csv.
func firstIrisRows(t testing.TB, n int) *tabular.Table {
	t.Helper()
	return fixture.ReadCSVText(t, "iris.csv", fixture.JoinCells(fixture.IrisCells()[:n+1], ",", "\n"), ingest.ReadOptions{})
}

// TestQuantileCuts checks cuts worked by hand with quantile definition 7 of
// Hyndman & Fan (1996): for sorted x[0..n-1], Q(p) = x[j] + g·(x[j+1]−x[j])
// with j + g = (n−1)·p. Cuts that repeat, or do not split the values
// (cut ≥ max), are dropped.
func TestQuantileCuts(t *testing.T) {
	first10 := firstIrisRows(t, 10)
	xor := fixture.ReadCSVText(t, "xor.csv", "x1,x2,y\n0,0,0\n0,1,1\n1,0,1\n1,1,0\n", ingest.ReadOptions{}) // XOR truth table, as testdata/xor.csv
	mostlyOnes := fixture.ReadCSVText(t, "ones.csv", "x,c\n1,5\n0,5\n1,5\n1,5\n1,5\n1,5\n1,5\n1,5\n1,5\n1,5\n", ingest.ReadOptions{})
	const tol = 1e-12 // interpolating one-decimal values in float64 errs by ~1e-15
	tests := []struct {
		name     string
		col      *tabular.Column
		encoding string
		want     []float64
	}{
		// sepal length, rows 1–10, sorted: 4.4 4.6 4.6 4.7 4.9 4.9 5.0 5.0 5.1 5.4.
		// p=.2: 9·.2=1.8 → 4.6+.8·0; p=.4: 3.6 → 4.7+.6·.2; p=.6: 5.4 → 4.9+.4·.1; p=.8: 7.2 → 5.0+.2·.1
		{"sepal length, 5 bins", first10.Column("sepal_length"), "thermometer:5", []float64{4.6, 4.82, 4.94, 5.02}},
		// p=.25: 2.25 → 4.6+.25·.1; p=.5: 4.5 → 4.9; p=.75: 6.75 → 5.0
		{"sepal length, 4 bins", first10.Column("sepal_length"), "thermometer:4", []float64{4.625, 4.9, 5.0}},
		// petal width, rows 1–10, sorted: 0.1, seven times 0.2, 0.3, 0.4; all three quartiles are 0.2.
		{"petal width, tied quartiles collapse", first10.Column("petal_width"), "thermometer:4", []float64{0.2}},
		// x1 of XOR: 0 0 1 1. p=.25: .75 → 0; p=.5: 1.5 → .5, which turns on
		// the same rows as 0 (one gap between 0 and 1), dropped; p=.75:
		// 2.25 → 1 = max, dropped. A 0/1 column gets one unit.
		{"XOR x1, one unit per gap", xor.Column("x1"), "thermometer:4", []float64{0}},
		// 1 0 1 1 1 1 1 1 1 1: every quantile of 4 bins is 1 = max; the
		// column still gets one unit, splitting the maximum from the rest.
		{"mostly ones, never zero units", mostlyOnes.Column("x"), "thermometer:4", []float64{0}},
		{"a constant column gets no unit", mostlyOnes.Column("c"), "thermometer:4", nil},
		{"onehot bins use the same cuts", first10.Column("sepal_length"), "onehot:5", []float64{4.6, 4.82, 4.94, 5.02}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p := fitPlan(t, []*tabular.Column{tt.col}, nil, encode.Options{Numeric: mustNumeric(t, tt.encoding)})
			got := p.Features[0].Cuts
			if len(got) != len(tt.want) {
				t.Fatalf("cuts = %v, want %v", got, tt.want)
			}
			for i := range got {
				if math.Abs(got[i]-tt.want[i]) > tol {
					t.Fatalf("cuts = %v, want %v ± %g", got, tt.want, tol)
				}
			}
		})
	}
}

// TestIrisQuartiles: thermometer:4 over all 150 rows cuts at the quartiles,
// and threshold defaults to the median.
func TestIrisQuartiles(t *testing.T) {
	iris := fixture.ReadIris(t)
	d, err := tabular.NewDataset(iris, "species", nil)
	if err != nil {
		t.Fatal(err)
	}
	// R summary(iris), from memory: 1st Qu., Median, 3rd Qu. (R's default
	// quantile is Hyndman & Fan 1996 type 7).
	quartiles := map[string][]float64{
		"sepal_length": {5.1, 5.8, 6.4},
		"sepal_width":  {2.8, 3.0, 3.3},
		"petal_length": {1.6, 4.35, 5.1},
		"petal_width":  {0.3, 1.3, 1.8},
	}
	const tol = 1e-12 // interpolation of two-decimal values in float64
	thermo := fitPlan(t, d.Features, nil, encode.Options{Numeric: mustNumeric(t, "thermometer:4")})
	median := fitPlan(t, d.Features, nil, encode.Options{Numeric: mustNumeric(t, "threshold")})
	for i, f := range thermo.Features {
		t.Run(f.Column, func(t *testing.T) {
			want := quartiles[f.Column]
			if len(f.Cuts) != 3 || !floatsNear(f.Cuts, want, tol) {
				t.Errorf("thermometer:4 cuts = %v, want %v", f.Cuts, want)
			}
			if cuts := median.Features[i].Cuts; len(cuts) != 1 || math.Abs(cuts[0]-want[1]) > tol {
				t.Errorf("threshold cut = %v, want the median %v", cuts, want[1])
			}
		})
	}
}

func floatsNear(a, b []float64, tol float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > tol {
			return false
		}
	}
	return true
}

// TestEncodeHandWorked encodes sepal length of rows 1–10 with the cuts
// 4.6, 4.82, 4.94, 5.02 of TestQuantileCuts: thermometer unit k is on when
// x > cut k; onehot bin k holds cut[k-1] < x ≤ cut[k].
func TestEncodeHandWorked(t *testing.T) {
	col := firstIrisRows(t, 10).Column("sepal_length")
	// sepal length, iris rows 1–10: 5.1 4.9 4.7 4.6 5.0 5.4 4.6 5.0 4.4 4.9
	thermometer := [][]float64{
		{1, 1, 1, 1}, {1, 1, 0, 0}, {1, 0, 0, 0}, {0, 0, 0, 0}, {1, 1, 1, 0},
		{1, 1, 1, 1}, {0, 0, 0, 0}, {1, 1, 1, 0}, {0, 0, 0, 0}, {1, 1, 0, 0},
	}
	bins := []int{4, 2, 1, 0, 3, 4, 0, 3, 0, 2}
	threshold := []float64{1, 0, 0, 0, 0, 1, 0, 0, 0, 0} // cut 5.0 given; 5.0 is not above it
	tests := []struct {
		encoding string
		want     func(row int) []float64
	}{
		{"thermometer:5", func(r int) []float64 { return thermometer[r] }},
		{"onehot:5", func(r int) []float64 {
			u := make([]float64, 5)
			u[bins[r]] = 1
			return u
		}},
		{"threshold:5.0", func(r int) []float64 { return threshold[r : r+1] }},
	}
	for _, tt := range tests {
		t.Run(tt.encoding, func(t *testing.T) {
			cols := []*tabular.Column{col}
			p := fitPlan(t, cols, nil, encode.Options{Numeric: mustNumeric(t, tt.encoding)})
			patterns, _ := p.EncodeTo(nil, cols, nil)
			w := p.Width()
			for r := range col.Len() {
				if got, want := patterns[r*w:(r+1)*w], tt.want(r); !slices.Equal(got, want) {
					t.Errorf("row %d (%v): units %v, want %v", r+1, col.Numbers[r], got, want)
				}
			}
		})
	}
}

// TestEncodeContinuous: zscore is (x−mean)/sd and minmax (x−min)/(max−min)
// clipped to [0,1], with the statistics of the fitting rows.
func TestEncodeContinuous(t *testing.T) {
	iris := fixture.ReadIris(t)
	col := iris.Column("petal_length")
	cols := []*tabular.Column{col}
	setosa := make([]int, 50) // rows 1–50 are setosa in testdata/iris.csv
	for i := range setosa {
		setosa[i] = i
	}
	t.Run("zscore", func(t *testing.T) {
		p := fitPlan(t, cols, nil, encode.Options{Numeric: mustNumeric(t, "zscore")})
		f := p.Features[0]
		mean, sd := stat.MeanStdDev(col.Numbers, nil) // gonum, an independent computation
		const tol = 1e-12                             // two summation orders of 150 values
		if math.Abs(f.Center-mean) > tol || math.Abs(f.Scale-sd) > tol {
			t.Fatalf("center, scale = %v, %v; want gonum's %v, %v", f.Center, f.Scale, mean, sd)
		}
		if math.Abs(f.Center-3.76) > 0.01 || math.Abs(f.Scale-1.76) > 0.01 { // UCI iris.names: mean 3.76, SD 1.76
			t.Errorf("center, scale = %v, %v; want 3.76, 1.76 ± 0.01", f.Center, f.Scale)
		}
		patterns, _ := p.EncodeTo(nil, cols, nil)
		for r, x := range col.Numbers {
			if want := (x - mean) / sd; math.Abs(patterns[r]-want) > tol {
				t.Fatalf("row %d: %v, want %v", r+1, patterns[r], want)
			}
		}
		if mean, sd := stat.MeanStdDev(patterns, nil); math.Abs(mean) > tol || math.Abs(sd-1) > tol {
			t.Errorf("encoded mean, sd = %v, %v; want 0, 1", mean, sd)
		}
	})
	t.Run("minmax fitted on setosa, applied to all rows", func(t *testing.T) {
		p := fitPlan(t, cols, setosa, encode.Options{Numeric: mustNumeric(t, "minmax")})
		f := p.Features[0]
		lo, hi := slices.Min(col.Numbers[:50]), slices.Max(col.Numbers[:50])
		if f.Center != lo || f.Scale != hi-lo {
			t.Fatalf("center, scale = %v, %v; want %v, %v", f.Center, f.Scale, lo, hi-lo)
		}
		patterns, _ := p.EncodeTo(nil, cols, nil)
		const tol = 1e-15 // one subtraction and division
		for r, x := range col.Numbers {
			want := min(1, max(0, (x-lo)/(hi-lo)))
			if math.Abs(patterns[r]-want) > tol {
				t.Fatalf("row %d: %v, want %v", r+1, patterns[r], want)
			}
		}
		// Row 150 (virginica) has a petal length above every setosa value.
		if patterns[149] != 1 {
			t.Errorf("row 150 (petal length %v) encodes %v, want 1 (clipped)", col.Numbers[149], patterns[149])
		}
	})
	t.Run("a constant column encodes 0", func(t *testing.T) {
		for _, enc := range []string{"zscore", "minmax"} {
			rows := []int{0, 1, 4} // petal length 1.4 in rows 1, 2, 5
			p := fitPlan(t, cols, rows, encode.Options{Numeric: mustNumeric(t, enc)})
			patterns, _ := p.EncodeTo(nil, cols, []int{0, 2, 149})
			if p.Features[0].Scale != 0 || slices.ContainsFunc(patterns, func(v float64) bool { return v != 0 }) {
				t.Errorf("%s: scale %v, patterns %v; want 0 and all zero", enc, p.Features[0].Scale, patterns)
			}
		}
	})
}

// TestEncodeCategorical: a category gets a unit when it appears at least MIN
// times in the fitting rows; other values go to the "other" unit and are
// counted in Stats.Other.
func TestEncodeCategorical(t *testing.T) {
	species := fixture.ReadIris(t).Column("species")
	cols := []*tabular.Column{species}
	first60 := make([]int, 60) // 50 setosa, then 10 versicolor
	for i := range first60 {
		first60[i] = i
	}
	tests := []struct {
		name       string
		encoding   string
		rows       []int
		categories []string
		other      int // rows of all 150 that go to the other unit
	}{
		{"every species", "onehot", nil, []string{"setosa", "versicolor", "virginica"}, 0},
		{"unseen virginica", "onehot", first60, []string{"setosa", "versicolor"}, 50},
		{"MIN 20 drops the 10 versicolor", "onehot:20", first60, []string{"setosa"}, 100},
		{"MIN above every count", "onehot:51", nil, nil, 150},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p := fitPlan(t, cols, tt.rows, encode.Options{Categorical: mustCategorical(t, tt.encoding)})
			f := p.Features[0]
			if !slices.Equal(f.Categories, tt.categories) {
				t.Fatalf("categories = %q, want %q", f.Categories, tt.categories)
			}
			wantNames := []string{}
			for _, c := range tt.categories {
				wantNames = append(wantNames, "species="+c)
			}
			wantNames = append(wantNames, "species=(other)")
			if names := p.UnitNames(); !slices.Equal(names, wantNames) || p.Width() != len(wantNames) {
				t.Fatalf("units %q (width %d), want %q", names, p.Width(), wantNames)
			}
			patterns, stats := p.EncodeTo(nil, cols, nil)
			if stats.Other["species"].Count != tt.other {
				t.Errorf("Other = %v, want %d for species", stats.Other, tt.other)
			}
			w := p.Width()
			for r := range species.Len() {
				unit := w - 1
				if i, ok := slices.BinarySearch(tt.categories, species.Text[r]); ok {
					unit = i
				}
				want := make([]float64, w)
				want[unit] = 1
				if got := patterns[r*w : (r+1)*w]; !slices.Equal(got, want) {
					t.Fatalf("row %d (%s): %v, want %v", r+1, species.Text[r], got, want)
				}
			}
		})
	}
}

// TestEncodeMissing: a missing-indicator unit follows the value units only
// when the fitting rows have a missing cell; otherwise missing cells encode
// with every unit off and are counted in Stats.MissingNoUnit.
func TestEncodeMissing(t *testing.T) {
	tab := fixture.ReadCSVText(t, "iris.csv", fixture.IrisWithGaps(), ingest.ReadOptions{})
	cols := []*tabular.Column{tab.Column("sepal_width"), tab.Column("species"), tab.Column("is_setosa")}
	var complete []int // rows with no missing cell
	for r := range tab.Rows {
		if !slices.ContainsFunc(cols, func(c *tabular.Column) bool { return c.IsMissing(r) }) {
			complete = append(complete, r)
		}
	}
	for _, enc := range numericEncodings {
		t.Run(enc, func(t *testing.T) {
			opts := encode.Options{Numeric: mustNumeric(t, enc)}
			withGaps := fitPlan(t, cols, nil, opts)
			for i, f := range withGaps.Features {
				wantUnit := cols[i].Missing != nil // sepal_width and species have gaps, is_setosa none
				if f.Missing != wantUnit {
					t.Errorf("%s: missing unit %v, want %v", f.Column, f.Missing, wantUnit)
				}
				if names := f.UnitNames(); wantUnit && names[len(names)-1] != f.Column+":missing" {
					t.Errorf("%s: last unit %q, want %s:missing", f.Column, names[len(names)-1], f.Column)
				}
			}
			patterns, stats := withGaps.EncodeTo(nil, cols, nil)
			if stats.MissingNoUnit != nil {
				t.Errorf("MissingNoUnit = %v, want none", stats.MissingNoUnit)
			}
			w0 := withGaps.Features[0].Width()
			for r := range tab.Rows {
				units := patterns[r*withGaps.Width() : r*withGaps.Width()+w0]
				gap := cols[0].IsMissing(r)
				if gap && (units[w0-1] != 1 || slices.Contains(units[:w0-1], 1)) || !gap && units[w0-1] != 0 {
					t.Fatalf("row %d (missing %v): sepal_width units %v", r+1, gap, units)
				}
			}

			noGaps := fitPlan(t, cols, complete, opts)
			for _, f := range noGaps.Features {
				if f.Missing {
					t.Errorf("%s: missing unit when fitted on complete rows", f.Column)
				}
			}
			patterns, stats = noGaps.EncodeTo(nil, cols, nil)
			want := map[string]encode.Surprise{
				"sepal_width": {Count: 15, FirstRow: slices.Index(cols[0].Missing, true) + 1},
				"species":     {Count: 1, FirstRow: slices.Index(cols[1].Missing, true) + 1},
			}
			if !reflect.DeepEqual(stats.MissingNoUnit, want) {
				t.Errorf("MissingNoUnit = %v, want %v", stats.MissingNoUnit, want)
			}
			w0 = noGaps.Features[0].Width()
			for r := 9; r < tab.Rows; r += 10 { // the NA rows of sepal_width
				if units := patterns[r*noGaps.Width() : r*noGaps.Width()+w0]; slices.Contains(units, 1) {
					t.Fatalf("row %d: missing sepal_width encodes %v, want all off", r+1, units)
				}
			}
		})
	}
}

// allPlanOptions pairs every numeric encoding with categorical onehot:1
// and onehot:30.
func allPlanOptions(t testing.TB) map[string]encode.Options {
	all := map[string]encode.Options{}
	for _, num := range numericEncodings {
		for _, cat := range []string{"onehot", "onehot:30"} {
			all[num+"/"+cat] = encode.Options{Numeric: mustNumeric(t, num), Categorical: mustCategorical(t, cat)}
		}
	}
	return all
}

// eachIrisPlan runs check as a subtest for a plan of every encoding of
// allPlanOptions, fitted on all rows of Iris with gaps.
func eachIrisPlan(t *testing.T, check func(t *testing.T, tab *tabular.Table, p *encode.Plan)) {
	tab := fixture.ReadCSVText(t, "iris.csv", fixture.IrisWithGaps(), ingest.ReadOptions{})
	for name, opts := range allPlanOptions(t) {
		t.Run(name, func(t *testing.T) { check(t, tab, fitPlan(t, tab.Columns, nil, opts)) })
	}
}

// TestEncodeUnitRange: over Iris with gaps and a boolean column, every unit
// of every encoding is in [0,1] except zscore (also hybrid's first); one-hot features have exactly
// one unit on; thermometer units are on up to some k and off above it.
func TestEncodeUnitRange(t *testing.T) {
	eachIrisPlan(t, func(t *testing.T, tab *tabular.Table, p *encode.Plan) {
		if len(p.UnitNames()) != p.Width() {
			t.Fatalf("%d unit names for width %d", len(p.UnitNames()), p.Width())
		}
		patterns, _ := p.EncodeTo(nil, tab.Columns, nil)
		if len(patterns) != tab.Rows*p.Width() {
			t.Fatalf("%d values, want %d rows × %d", len(patterns), tab.Rows, p.Width())
		}
		row := patterns
		for r := range tab.Rows {
			for i, f := range p.Features {
				units := row[:f.Width()]
				row = row[f.Width():]
				values := units
				if f.Missing {
					values = units[:len(units)-1]
				}
				missing := tab.Columns[i].IsMissing(r)
				if err := checkUnits(f, values, missing); err != nil {
					t.Fatalf("row %d, %s: %v", r+1, f.Column, err)
				}
			}
		}
	})
}

func checkUnits(f encode.Feature, values []float64, missing bool) error {
	if f.Method == encode.Hybrid {
		// The zscore unit, then thermometer units.
		if missing && values[0] != 0 {
			return fmt.Errorf("a missing cell has zscore unit %v", values[0])
		}
		f.Method, values = encode.Thermometer, values[1:]
	}
	if f.Method != encode.ZScore {
		for _, v := range values {
			if v < 0 || v > 1 {
				return fmt.Errorf("%s unit %v outside [0,1]", f.Method, v)
			}
		}
	}
	on := 0
	for _, v := range values {
		if v == 1 {
			on++
		}
	}
	switch {
	case missing:
		if slices.ContainsFunc(values, func(v float64) bool { return v != 0 }) {
			return fmt.Errorf("a missing cell has value units %v", values)
		}
	case f.Method == encode.OneHot || f.Method == encode.OneHotBins:
		if on != 1 || len(values) != on+countZeros(values) {
			return fmt.Errorf("one-hot units %v", values)
		}
	case f.Method == encode.Thermometer:
		if !slices.Equal(values[:on], slices.Repeat([]float64{1}, on)) || countZeros(values) != len(values)-on {
			return fmt.Errorf("thermometer units %v", values)
		}
	}
	return nil
}

func countZeros(values []float64) int {
	n := 0
	for _, v := range values {
		if v == 0 {
			n++
		}
	}
	return n
}

// cloneTable deep-copies a table so a test can change cells.
func cloneTable(t *tabular.Table) *tabular.Table {
	c := &tabular.Table{Name: t.Name, Rows: t.Rows}
	for _, col := range t.Columns {
		cc := *col
		cc.Numbers, cc.Text, cc.Missing = slices.Clone(col.Numbers), slices.Clone(col.Text), slices.Clone(col.Missing)
		c.Columns = append(c.Columns, &cc)
	}
	return c
}

// TestPlanNoLeakage: a plan fitted on training rows depends on nothing else.
// Rows 1–40, 51–90 and 101–140 train; a held-out row changed to an extreme
// value, an unseen category or a missing cell leaves the plan unchanged,
// while the same change to a training row changes it (so the check can fail).
func TestPlanNoLeakage(t *testing.T) {
	base := fixture.ReadCSVText(t, "iris.csv", fixture.IrisWithGaps(), ingest.ReadOptions{})
	var train []int
	for r := range base.Rows {
		if r%50 < 40 {
			train = append(train, r)
		}
	}
	extreme := func(tab *tabular.Table, row int) {
		for _, col := range tab.Columns {
			switch col.Kind {
			case tabular.Numeric:
				col.Numbers[row] = 1e6
				if col.Missing != nil {
					col.Missing[row] = false
				}
			case tabular.Categorical:
				col.Text[row] = "unseen"
				if col.Missing != nil {
					col.Missing[row] = false
				}
			case tabular.Boolean:
				if col.Missing == nil {
					col.Missing = make([]bool, tab.Rows)
				}
				col.Missing[row] = true
			}
		}
	}
	for name, opts := range allPlanOptions(t) {
		t.Run(name, func(t *testing.T) {
			before := cloneTable(base)
			want := fitPlan(t, base.Columns, train, opts)
			if !reflect.DeepEqual(base, before) {
				t.Fatal("FitPlan modified its input")
			}
			heldOut := cloneTable(base)
			extreme(heldOut, 145) // row 146, held out
			if got := fitPlan(t, heldOut.Columns, train, opts); !reflect.DeepEqual(got, want) {
				t.Errorf("a held-out row changed the plan:\n got %+v\nwant %+v", got, want)
			}
			trained := cloneTable(base)
			extreme(trained, 139) // row 140, a training row
			if got := fitPlan(t, trained.Columns, train, opts); reflect.DeepEqual(got, want) {
				t.Errorf("changing a training row did not change the plan %+v", got)
			}
		})
	}
}

// TestPlanBind encodes a table whose columns are in another order the same
// as the table the plan was fitted on, and reports missing or changed columns.
func TestPlanBind(t *testing.T) {
	iris := fixture.ReadIris(t)
	d, err := tabular.NewDataset(iris, "species", nil)
	if err != nil {
		t.Fatal(err)
	}
	p := fitPlan(t, append(slices.Clone(d.Features), iris.Column("species")), nil, encode.Options{})
	want, _ := p.EncodeTo(nil, append(slices.Clone(d.Features), iris.Column("species")), nil)

	reversed := fixture.IrisCells()
	for _, row := range reversed {
		slices.Reverse(row)
	}
	t.Run("columns found by name", func(t *testing.T) {
		other := fixture.ReadCSVText(t, "reversed.csv", fixture.JoinCells(reversed, ",", "\n"), ingest.ReadOptions{Kinds: p.Kinds()})
		cols, err := p.Bind(other)
		if err != nil {
			t.Fatal(err)
		}
		if got, _ := p.EncodeTo(nil, cols, nil); !slices.Equal(got, want) {
			t.Error("the reordered table encodes differently")
		}
	})
	tests := []struct {
		name     string
		text     string
		kinds    map[string]tabular.Kind
		column   int
		colName  string
		contains string
	}{
		{"missing column", fixture.JoinCells(firstColumns(fixture.IrisCells(), 3), ",", "\n"), nil, 0, "petal_width", "does not have it"},
		{"wrong kind", string(fixture.IrisBytes()), map[string]tabular.Kind{"sepal_width": tabular.Categorical}, 2, "sepal_width", "categorical here but numeric"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			other := fixture.ReadCSVText(t, "new.csv", tt.text, ingest.ReadOptions{Kinds: tt.kinds})
			_, err := p.Bind(other)
			de := fixture.AsDataError(t, err)
			if de.File != "new.csv" || de.Column != tt.column || de.Name != tt.colName || !strings.Contains(err.Error(), tt.contains) {
				t.Errorf("got %q (column %d, %q), want column %d (%q) saying %q", err, de.Column, de.Name, tt.column, tt.colName, tt.contains)
			}
		})
	}
}

// firstColumns keeps the first n cells of every row.
func firstColumns(cells [][]string, n int) [][]string {
	out := make([][]string, len(cells))
	for i, row := range cells {
		out[i] = row[:n]
	}
	return out
}

// TestPlanJSON: a plan written to JSON and read back is the same plan and
// encodes every row identically.
func TestPlanJSON(t *testing.T) {
	eachIrisPlan(t, func(t *testing.T, tab *tabular.Table, p *encode.Plan) {
		data, err := json.Marshal(p)
		if err != nil {
			t.Fatal(err)
		}
		var back encode.Plan
		if err := json.Unmarshal(data, &back); err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(&back, p) {
			t.Errorf("read back %+v, want %+v", back, *p)
		}
		want, _ := p.EncodeTo(nil, tab.Columns, nil)
		cols, err := back.Bind(tab)
		if err != nil {
			t.Fatal(err)
		}
		if got, _ := back.EncodeTo(nil, cols, nil); !slices.Equal(got, want) {
			t.Error("the plan read back encodes differently")
		}
	})
}

// TestEncodeToRows: encoding a subset of rows gives those rows of the full
// encoding, and a large enough dst is reused.
func TestEncodeToRows(t *testing.T) {
	iris := fixture.ReadIris(t)
	p := fitPlan(t, iris.Columns, nil, encode.Options{})
	all, _ := p.EncodeTo(nil, iris.Columns, nil)
	rows := []int{149, 0, 75}
	dst := make([]float64, 0, len(all))
	got, _ := p.EncodeTo(dst, iris.Columns, rows)
	w := p.Width()
	for n, r := range rows {
		if !slices.Equal(got[n*w:(n+1)*w], all[r*w:(r+1)*w]) {
			t.Errorf("pattern %d differs from row %d of the full encoding", n, r+1)
		}
	}
	if &got[0] != &dst[:1][0] {
		t.Error("dst was not reused")
	}
}

// TestCategoryCap: a categorical column with more distinct values than
// MaxCategories is an error unless MIN leaves few enough.
func TestCategoryCap(t *testing.T) {
	// Iris seven times over (1050 rows) with a row id, distinct in every row.
	cells := fixture.IrisCells()
	rows := [][]string{append(slices.Clone(cells[0]), "id")}
	for copyN := range 7 {
		for r, row := range cells[1:] {
			rows = append(rows, append(slices.Clone(row), fmt.Sprintf("iris-%d-%d", copyN, r+1)))
		}
	}
	tab := fixture.ReadCSVText(t, "iris7.csv", fixture.JoinCells(rows, ",", "\n"), ingest.ReadOptions{})
	id := []*tabular.Column{tab.Column("id")}
	_, err := encode.FitPlan(id, nil, encode.Options{})
	de := fixture.AsDataError(t, err)
	if de.Name != "id" || !strings.Contains(err.Error(), fmt.Sprintf("cap of %d", encode.MaxCategories)) {
		t.Errorf("got %q, want the cap error naming column id", err)
	}
	p, err := encode.FitPlan(id, nil, encode.Options{Categorical: mustCategorical(t, "onehot:2")})
	if err != nil {
		t.Fatalf("onehot:2: %v", err)
	}
	if p.Width() != 1 { // every id is seen once: only the other unit
		t.Errorf("onehot:2: units %q, want the other unit only", p.UnitNames())
	}
}

func TestParseEncoding(t *testing.T) {
	cut := 1.5
	numeric := []struct {
		in      string
		want    encode.Encoding
		wantErr bool
	}{
		{"thermometer", encode.Encoding{Method: encode.Thermometer, Bins: encode.DefaultBins}, false},
		{"thermometer:2", encode.Encoding{Method: encode.Thermometer, Bins: 2}, false},
		{"onehot:256", encode.Encoding{Method: encode.OneHotBins, Bins: 256}, false},
		{"threshold", encode.Encoding{Method: encode.Threshold}, false},
		{"threshold:1.5", encode.Encoding{Method: encode.Threshold, Cut: &cut}, false},
		{"zscore", encode.Encoding{Method: encode.ZScore}, false},
		{"minmax", encode.Encoding{Method: encode.MinMax}, false},
		{"thermometer:1", encode.Encoding{}, true},
		{"onehot:257", encode.Encoding{}, true},
		{"thermometer:x", encode.Encoding{}, true},
		{"threshold:NaN", encode.Encoding{}, true},
		{"threshold:Inf", encode.Encoding{}, true},
		{"zscore:2", encode.Encoding{}, true},
		{"binary", encode.Encoding{}, true},
	}
	for _, tt := range numeric {
		t.Run("numeric "+tt.in, func(t *testing.T) {
			got, err := encode.ParseNumericEncoding(tt.in)
			if tt.wantErr {
				if err == nil || !strings.HasPrefix(err.Error(), "ingest: ") {
					t.Errorf("got %+v, %v; want an ingest error", got, err)
				}
				return
			}
			if err != nil || !reflect.DeepEqual(got, tt.want) {
				t.Errorf("got %+v, %v; want %+v", got, err, tt.want)
			}
		})
	}
	categorical := []struct {
		in      string
		min     int
		wantErr bool
	}{
		{"onehot", 1, false},
		{"onehot:5", 5, false},
		{"onehot:0", 0, true},
		{"onehot:x", 0, true},
		{"thermometer", 0, true},
	}
	for _, tt := range categorical {
		t.Run("categorical "+tt.in, func(t *testing.T) {
			got, err := encode.ParseCategoricalEncoding(tt.in)
			if (err != nil) != tt.wantErr || !tt.wantErr && (got.Method != encode.OneHot || got.Min != tt.min) {
				t.Errorf("got %+v, %v; want MIN %d, error %v", got, err, tt.min, tt.wantErr)
			}
		})
	}
}
