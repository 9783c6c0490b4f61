package tabular_test

import (
	"slices"
	"strconv"
	"strings"
	"testing"

	"deltafit/ingest"
	"deltafit/ingest/tabular"
	"deltafit/internal/fixture"
)

func columnNames(cols []*tabular.Column) []string {
	names := make([]string, len(cols))
	for i, c := range cols {
		names[i] = c.Name
	}
	return names
}

func TestNewDataset(t *testing.T) {
	iris := fixture.ReadIris(t)
	t.Run("features are the other columns in table order", func(t *testing.T) {
		d, err := tabular.NewDataset(iris, "species", nil)
		if err != nil {
			t.Fatal(err)
		}
		if got, want := columnNames(d.Features), fixture.IrisColumns[:4]; !slices.Equal(got, want) {
			t.Errorf("features = %q, want %q", got, want)
		}
		for i, k := range d.Classes {
			if d.Labels[k] != iris.Column("species").Text[i] {
				t.Fatalf("row %d: class %d (%s), want %s", i+1, k, d.Labels[k], iris.Column("species").Text[i])
			}
		}
	})
	t.Run("ignored columns are not features", func(t *testing.T) {
		d, err := tabular.NewDataset(iris, "species", []string{"sepal_width", "petal_length"})
		if err != nil {
			t.Fatal(err)
		}
		if got, want := columnNames(d.Features), []string{"sepal_length", "petal_width"}; !slices.Equal(got, want) {
			t.Errorf("features = %q, want %q", got, want)
		}
	})
	t.Run("a numeric column of many values is refused as the target", func(t *testing.T) {
		// UCI iris.names: sepal length is a measurement in cm (35 distinct values here).
		_, err := tabular.NewDataset(iris, "sepal_length", []string{"species"})
		de := fixture.AsDataError(t, err)
		if de.Column != 1 || !strings.Contains(de.Error(), "the target holds 35 distinct numbers, so it looks like a measurement") {
			t.Errorf("error %v, want one naming column 1 and the 35 distinct numbers", err)
		}
	})
	t.Run("any column declared categorical can be the target", func(t *testing.T) {
		declared := fixture.ReadCSVText(t, "iris.csv", string(fixture.IrisBytes()), ingest.ReadOptions{Kinds: map[string]tabular.Kind{"sepal_length": tabular.Categorical}})
		d, err := tabular.NewDataset(declared, "sepal_length", []string{"species"})
		if err != nil {
			t.Fatal(err)
		}
		if got, want := columnNames(d.Features), fixture.IrisColumns[1:4]; !slices.Equal(got, want) {
			t.Errorf("features = %q, want %q", got, want)
		}
	})
}

// TestDatasetLabelOrder: labels sort numerically when all are numbers,
// else as text, and Labels[Classes[i]] is the target value of row i.
func TestDatasetLabelOrder(t *testing.T) {
	// Petal width in fifths of a centimetre: whole numbers 1 to 13, whose
	// text order ("1" < "10" < "2") differs from their numeric order.
	tenths := fixture.EditIris(func(c [][]string) {
		for r := 1; r < len(c); r++ {
			x, err := strconv.ParseFloat(c[r][3], 64)
			if err != nil {
				t.Fatal(err)
			}
			c[r][3] = strconv.Itoa(int(x*5 + 0.5))
		}
	})
	tests := []struct {
		name    string
		text    string
		kinds   map[string]tabular.Kind
		target  string
		compare func(a, b string) int
	}{
		{"text labels in text order", string(fixture.IrisBytes()), nil, "species", strings.Compare},
		{"numeric labels in numeric order", tenths, nil, "petal_width", compareNumbers},
		{"numbers declared categorical still sort as numbers", tenths, map[string]tabular.Kind{"petal_width": tabular.Categorical}, "petal_width", compareNumbers},
		{"numbers mixed with a word sort as text", fixture.EditIris(func(c [][]string) { c[0][3], c[150][3] = "petal_width", "wide" }),
			map[string]tabular.Kind{"petal_width": tabular.Categorical}, "petal_width", strings.Compare},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tab := fixture.ReadCSVText(t, "iris.csv", tt.text, ingest.ReadOptions{Kinds: tt.kinds})
			d, err := tabular.NewDataset(tab, tt.target, nil)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.IsSortedFunc(d.Labels, tt.compare) {
				t.Errorf("labels %q are not in the expected order", d.Labels)
			}
			distinct := map[string]bool{}
			col := tab.Column(tt.target)
			for i, k := range d.Classes {
				distinct[col.Value(i)] = true
				if d.Labels[k] != col.Value(i) {
					t.Fatalf("row %d: label %q, want %q", i+1, d.Labels[k], col.Value(i))
				}
			}
			if len(d.Labels) != len(distinct) {
				t.Errorf("%d labels for %d distinct values", len(d.Labels), len(distinct))
			}
		})
	}
}

// TestDatasetLabelTies: labels that are different text for one number keep
// one order, whatever order the rows give them in. Class indexes, and with
// them every score column and model file, depend on it.
func TestDatasetLabelTies(t *testing.T) {
	// Five spellings of one, then two; a categorical target keeps them apart.
	want := []string{"+1", "01", "1", "1.0", "1e0", "2"}
	rows := []string{"1", "1.0", "01", "2", "1e0", "+1"}
	for rotation := range rows {
		t.Run(strconv.Itoa(rotation), func(t *testing.T) {
			text := "x,y\n"
			for i := range rows {
				text += strconv.Itoa(i) + "," + rows[(i+rotation)%len(rows)] + "\n"
			}
			tab := fixture.ReadCSVText(t, "ties.csv", text, ingest.ReadOptions{Kinds: map[string]tabular.Kind{"y": tabular.Categorical}})
			for range 20 { // the labels are gathered in a map; repeat to meet its orders
				d, err := tabular.NewDataset(tab, "y", nil)
				if err != nil {
					t.Fatal(err)
				}
				if !slices.Equal(d.Labels, want) {
					t.Fatalf("labels %q, want %q", d.Labels, want)
				}
			}
		})
	}
}

func compareNumbers(a, b string) int {
	x, errA := strconv.ParseFloat(a, 64)
	y, errB := strconv.ParseFloat(b, 64)
	if errA != nil || errB != nil {
		panic("compareNumbers: not a number")
	}
	switch {
	case x < y:
		return -1
	case x > y:
		return 1
	}
	return 0
}

func TestNewDatasetErrors(t *testing.T) {
	iris := fixture.ReadIris(t)
	// The header and the first 50 rows, all setosa.
	setosaOnly := fixture.ReadCSVText(t, "iris.csv", fixture.JoinCells(fixture.IrisCells()[:51], ",", "\n"), ingest.ReadOptions{})
	gaps := fixture.ReadCSVText(t, "iris.csv", fixture.IrisWithGaps(), ingest.ReadOptions{})
	tests := []struct {
		name     string
		table    *tabular.Table
		target   string
		ignore   []string
		row      int
		column   int
		colName  string
		contains string
	}{
		{"unknown target lists the columns", iris, "class", nil, 0, 0, "class",
			`the columns are "sepal_length", "sepal_width", "petal_length", "petal_width", "species"`},
		{"missing target cell names its row", gaps, "species", nil, 5, 5, "species", "target cell is missing"},
		{"a single class", setosaOnly, "species", nil, 0, 5, "species", `the same class "setosa"`},
		{"ignoring the target", iris, "species", []string{"species"}, 0, 0, "species", "cannot also be ignored"},
		{"ignoring an unknown column", iris, "species", []string{"sepal"}, 0, 0, "sepal", `the columns are "sepal_length"`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := tabular.NewDataset(tt.table, tt.target, tt.ignore)
			de := fixture.AsDataError(t, err)
			if de.Row != tt.row || de.Column != tt.column || de.Name != tt.colName || de.File != "iris.csv" {
				t.Errorf("error at %q row %d, column %d (%q); want iris.csv row %d, column %d (%q): %v",
					de.File, de.Row, de.Column, de.Name, tt.row, tt.column, tt.colName, err)
			}
			if !strings.Contains(err.Error(), tt.contains) {
				t.Errorf("error %q does not say %q", err, tt.contains)
			}
		})
	}
}

func TestTargetClasses(t *testing.T) {
	iris := fixture.ReadIris(t)
	d, err := tabular.NewDataset(iris, "species", nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Run("the dataset's labels give its classes", func(t *testing.T) {
		got, err := tabular.TargetClasses(iris, "species", d.Labels)
		if err != nil || !slices.Equal(got, d.Classes) {
			t.Fatalf("got %v, %v; want the dataset's classes", got, err)
		}
	})
	t.Run("classes follow the order of the given labels", func(t *testing.T) {
		reversed := slices.Clone(d.Labels)
		slices.Reverse(reversed)
		got, err := tabular.TargetClasses(iris, "species", reversed)
		if err != nil {
			t.Fatal(err)
		}
		for i, k := range got {
			if k != len(d.Labels)-1-d.Classes[i] {
				t.Fatalf("row %d: class %d, want %d", i+1, k, len(d.Labels)-1-d.Classes[i])
			}
		}
	})
	t.Run("an unknown label names the first row that has it", func(t *testing.T) {
		_, err := tabular.TargetClasses(iris, "species", []string{"setosa", "versicolor"})
		de := fixture.AsDataError(t, err)
		if de.Row != 101 || de.Column != 5 || de.Name != "species" { // testdata/iris.csv, like UCI iris.data, lists the species in blocks of 50
			t.Errorf("error at row %d, column %d (%q), want row 101, column 5 (species): %v", de.Row, de.Column, de.Name, err)
		}
		if !strings.Contains(err.Error(), `"virginica"`) || !strings.Contains(err.Error(), `"setosa", "versicolor"`) {
			t.Errorf("error %q does not name the label and the known ones", err)
		}
	})
	t.Run("an unknown target column", func(t *testing.T) {
		_, err := tabular.TargetClasses(iris, "class", d.Labels)
		if de := fixture.AsDataError(t, err); de.Name != "class" {
			t.Errorf("error names %q, want class: %v", de.Name, err)
		}
	})
}

// DropRows keeps the input row number of every row it keeps, so messages
// name the row of the file.
func TestDropRows(t *testing.T) {
	tab := fixture.ReadCSVText(t, "iris.csv", fixture.IrisWithGaps(), ingest.ReadOptions{})
	// Rows 10, 20, … have NA in sepal_width and row 5 no species.
	kept, dropped := tab.DropRows(func(i int) bool { return !tab.Column("sepal_width").IsMissing(i) })
	if dropped != 15 || kept.Rows != 135 {
		t.Fatalf("dropped %d, kept %d; want 15 and 135", dropped, kept.Rows)
	}
	if kept.RowNumber(8) != 9 || kept.RowNumber(9) != 11 || kept.RowNumber(134) != 149 {
		t.Errorf("row numbers %d %d %d, want 9 11 149", kept.RowNumber(8), kept.RowNumber(9), kept.RowNumber(134))
	}
	if kept.Column("sepal_width").MissingCount() != 0 || kept.Column("species").MissingCount() != 1 {
		t.Error("the kept rows lost or gained missing cells")
	}
	again, dropped := kept.DropRows(func(i int) bool { return !tabular.MissingTarget(kept, "species")(i) })
	if dropped != 1 || again.RowNumber(3) != 4 || again.RowNumber(4) != 6 {
		t.Errorf("dropping the row without a species: %d dropped, rows %d %d", dropped, again.RowNumber(3), again.RowNumber(4))
	}
	if _, err := tabular.NewDataset(again, "species", nil); err != nil {
		t.Error(err)
	}
	_, err := tabular.NewDataset(kept, "species", nil)
	if de := fixture.AsDataError(t, err); de.Row != 5 {
		t.Errorf("a missing target named row %d, want the input's row 5", de.Row)
	}
}

// A target read as text finds the labels a numeric or boolean target gave
// the model: the same number or truth value, in any decimal form; hex
// floats and digit separators are not numbers here, as in the readers.
func TestTargetClassesCanonical(t *testing.T) {
	col := &tabular.Column{Name: "y", Kind: tabular.Categorical, Text: []string{"1.0", " 2 ", "1e0", "TRUE", "2"}}
	tab := &tabular.Table{Name: "new.csv", Rows: 5, Columns: []*tabular.Column{col}}
	labels := []string{"1", "2", "true"}
	classes, err := tabular.TargetClasses(tab, "y", labels)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(classes, []int{0, 1, 0, 2, 1}) {
		t.Fatalf("classes %v", classes)
	}
	for _, bad := range []string{"0x1", "1_0", "one", "yes"} {
		col.Text[0] = bad
		if _, err := tabular.TargetClasses(tab, "y", labels); err == nil || !strings.Contains(err.Error(), "row 1") {
			t.Fatalf("%q: error %v, want one naming row 1", bad, err)
		}
	}
}
