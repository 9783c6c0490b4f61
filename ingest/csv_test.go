package ingest_test

import (
	"bytes"
	"errors"
	"fmt"
	"slices"
	"strings"
	"testing"

	"deltafit/ingest"
	"deltafit/ingest/tabular"
	"deltafit/internal/fixture"
)

// TestReadCSVLayouts reads Iris written in other valid layouts to the same
// table as testdata/iris.csv.
func TestReadCSVLayouts(t *testing.T) {
	want := fixture.ReadIris(t)
	cells := fixture.IrisCells()
	quoted := make([][]string, len(cells))
	for r, row := range cells {
		quoted[r] = make([]string, len(row))
		for c, v := range row {
			quoted[r][c] = `"` + v + `"`
		}
	}
	tests := []struct {
		name string
		text string
		opts ingest.ReadOptions
	}{
		{"semicolon delimiter", fixture.JoinCells(cells, ";", "\n"), ingest.ReadOptions{Delimiter: ';'}},
		{"tab delimiter", fixture.JoinCells(cells, "\t", "\n"), ingest.ReadOptions{Delimiter: '\t'}},
		{"CRLF line ends", fixture.JoinCells(cells, ",", "\r\n"), ingest.ReadOptions{}},                            // RFC 4180 §2.1: records end with CRLF
		{"every field quoted", fixture.JoinCells(quoted, ",", "\r\n"), ingest.ReadOptions{}},                       // RFC 4180 §2.5
		{"no final line end", strings.TrimSuffix(fixture.JoinCells(cells, ",", "\n"), "\n"), ingest.ReadOptions{}}, // RFC 4180 §2.2
		{"UTF-8 byte order mark", "\xef\xbb\xbf" + fixture.JoinCells(cells, ",", "\n"), ingest.ReadOptions{}},      // Unicode 15.0 §23.8: U+FEFF at the start is a signature, not content
		{"byte order mark, CSV format given", "\xef\xbb\xbf" + fixture.JoinCells(cells, ",", "\r\n"), ingest.ReadOptions{Format: ingest.FormatCSV}},
		{"blank lines between records", strings.ReplaceAll(fixture.JoinCells(cells, ",", "\n"), "setosa\n", "setosa\n\n"), ingest.ReadOptions{}}, // encoding/csv skips empty lines
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			requireTablesEqual(t, want, fixture.ReadCSVText(t, "iris.csv", tt.text, tt.opts))
		})
	}
}

// TestReadCSVQuotedFields: a quoted field may hold the delimiter, a line
// break and doubled quotes (RFC 4180 §2.6, §2.7); row numbers count records,
// not lines.
func TestReadCSVQuotedFields(t *testing.T) {
	text := fixture.EditIris(func(cells [][]string) {
		cells[0][4] = `"species, ""Iris""` + "\n" + `name"`
		for r := 1; r < len(cells); r++ {
			cells[r][4] = `"Iris,` + "\n" + cells[r][4] + `"`
		}
		cells[100][2] = "abc" // a stray word below 99 two-line records
	})
	_, err := ingest.ReadTable("iris.csv", strings.NewReader(text), ingest.ReadOptions{})
	if de := fixture.AsDataError(t, err); de.Row != 100 || de.Column != 3 {
		t.Errorf("error at row %d, column %d, want row 100, column 3: %v", de.Row, de.Column, err)
	}

	text = fixture.EditIris(func(cells [][]string) {
		cells[0][4] = `"species, ""Iris""` + "\n" + `name"`
		for r := 1; r < len(cells); r++ {
			cells[r][4] = `"Iris,` + "\r\n" + cells[r][4] + `"`
		}
	})
	tab := fixture.ReadCSVText(t, "iris.csv", text, ingest.ReadOptions{})
	species := tab.Columns[4]
	if want := "species, \"Iris\"\nname"; species.Name != want {
		t.Errorf("header name = %q, want %q", species.Name, want)
	}
	iris := fixture.ReadIris(t).Column("species")
	for r := range tab.Rows {
		// encoding/csv: a quoted CRLF reads as a single \n
		if want := "Iris,\n" + iris.Text[r]; species.Text[r] != want {
			t.Fatalf("row %d species = %q, want %q", r+1, species.Text[r], want)
		}
	}
}

// TestReadCSVMissingCells: empty cells and NA are missing; the values of
// other cells are unchanged.
func TestReadCSVMissingCells(t *testing.T) {
	iris := fixture.ReadIris(t)
	tab := fixture.ReadCSVText(t, "iris.csv", fixture.IrisWithGaps(), ingest.ReadOptions{})
	width := tab.Column("sepal_width")
	if width.Kind != tabular.Numeric {
		t.Fatalf("sepal_width is %v, want numeric", width.Kind)
	}
	if n := width.MissingCount(); n != 15 { // every 10th of 150 rows
		t.Errorf("sepal_width has %d missing cells, want 15", n)
	}
	for r := range tab.Rows {
		gap := (r+1)%10 == 0
		if width.IsMissing(r) != gap {
			t.Fatalf("row %d: missing = %v, want %v", r+1, width.IsMissing(r), gap)
		}
		if want := iris.Column("sepal_width").Numbers[r]; !gap && width.Numbers[r] != want {
			t.Fatalf("row %d: sepal_width = %v, want %v", r+1, width.Numbers[r], want)
		}
	}
	species := tab.Column("species")
	if species.Kind != tabular.Categorical || !species.IsMissing(4) || species.MissingCount() != 1 || species.Value(4) != "" {
		t.Errorf("species: kind %v, row 5 missing %v, %d missing; want categorical with only row 5 missing",
			species.Kind, species.IsMissing(4), species.MissingCount())
	}
	if c := tab.Column("sepal_length"); c.Missing != nil {
		t.Errorf("sepal_length has a missing mask %v, want nil when no cell is missing", c.Missing)
	}
}

// TestReadCSVKinds: column kinds are inferred from every value, and
// ReadOptions.Kinds overrides them.
func TestReadCSVKinds(t *testing.T) {
	// XOR truth table with the output written as true/false, in mixed case.
	xorBool := "x1,x2,y\n0,0,false\n0,1,True\n1,0,TRUE\n1,1,False\n"
	tests := []struct {
		name   string
		text   string
		kinds  map[string]tabular.Kind
		column string
		want   tabular.Kind
		value  string // Value of row 2
	}{
		{"measurements are numeric", string(fixture.IrisBytes()), nil, "petal_length", tabular.Numeric, "1.4"},
		{"species is categorical", string(fixture.IrisBytes()), nil, "species", tabular.Categorical, "setosa"},
		{"0/1 is numeric", xorBool, nil, "x2", tabular.Numeric, "1"},
		{"true/false in any case is boolean", xorBool, nil, "y", tabular.Boolean, "true"},
		{"numbers declared categorical", string(fixture.IrisBytes()), map[string]tabular.Kind{"petal_length": tabular.Categorical}, "petal_length", tabular.Categorical, "1.4"},
		{"booleans declared categorical", xorBool, map[string]tabular.Kind{"y": tabular.Categorical}, "y", tabular.Categorical, "True"},
		{"a lone number among words stays categorical", fixture.EditIris(func(c [][]string) { c[3][4] = "3" }), nil, "species", tabular.Categorical, "setosa"},
		{"all cells missing is categorical", fixture.EditIris(func(c [][]string) {
			for r := 1; r < len(c); r++ {
				c[r][0] = "NA"
			}
		}), nil, "sepal_length", tabular.Categorical, ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tab := fixture.ReadCSVText(t, "in.csv", tt.text, ingest.ReadOptions{Kinds: tt.kinds})
			col := tab.Column(tt.column)
			if col.Kind != tt.want {
				t.Fatalf("%s is %v, want %v", tt.column, col.Kind, tt.want)
			}
			if got := col.Value(1); got != tt.value {
				t.Errorf("row 2 of %s = %q, want %q", tt.column, got, tt.value)
			}
		})
	}
}

// TestReadCSVErrors: every bad input is an error that says where.
func TestReadCSVErrors(t *testing.T) {
	setCell := func(row, col int, v string) string {
		return fixture.EditIris(func(c [][]string) { c[row][col-1] = v })
	}
	tests := []struct {
		name     string
		text     string
		opts     ingest.ReadOptions
		sentinel error
		row      int // 0: no row
		column   int
		colName  string
		contains string
	}{
		{"stray word in a numeric column", setCell(42, 3, "abc"), ingest.ReadOptions{}, nil, 42, 3, "petal_length", `"abc" is not a number`},
		{"NaN", setCell(7, 4, "NaN"), ingest.ReadOptions{}, nil, 7, 4, "petal_width", "not a finite number"},
		{"Inf", setCell(7, 4, "Inf"), ingest.ReadOptions{}, nil, 7, 4, "petal_width", "not a finite number"},
		{"-Infinity", setCell(7, 4, "-Infinity"), ingest.ReadOptions{}, nil, 7, 4, "petal_width", "not a finite number"},
		{"1e400 overflows float64", setCell(150, 1, "1e400"), ingest.ReadOptions{}, nil, 150, 1, "sepal_length", "outside the range"}, // IEEE 754: largest float64 ≈ 1.8e308
		{"declared numeric", string(fixture.IrisBytes()), ingest.ReadOptions{Kinds: map[string]tabular.Kind{"species": tabular.Numeric}}, nil, 1, 5, "species", `"setosa" is not a number`},
		{"declared boolean", string(fixture.IrisBytes()), ingest.ReadOptions{Kinds: map[string]tabular.Kind{"species": tabular.Boolean}}, nil, 1, 5, "species", "not true, false, 1 or 0"},
		{"kind for an unknown column", string(fixture.IrisBytes()), ingest.ReadOptions{Kinds: map[string]tabular.Kind{"petal": tabular.Numeric}}, nil, 0, 0, "petal", "no such column"},
		{"row with an extra field", setCell(60, 5, "versicolor,1"), ingest.ReadOptions{}, nil, 60, 0, "", "different number of fields"},
		{"row with a field short", fixture.EditIris(func(c [][]string) { c[60] = c[60][:4] }), ingest.ReadOptions{}, nil, 60, 0, "", "different number of fields"},
		{"row with an extra field, batches of 7", setCell(60, 5, "versicolor,1"), ingest.ReadOptions{BatchRows: 7}, nil, 60, 0, "", "different number of fields"},
		{"row with an extra field, batches of 1", setCell(60, 5, "versicolor,1"), ingest.ReadOptions{BatchRows: 1}, nil, 60, 0, "", "different number of fields"},
		{"unterminated quote", setCell(120, 5, `"virginica`), ingest.ReadOptions{}, nil, 120, 0, "", "quote"},
		{"bare quote", setCell(120, 5, `vir"ginica`), ingest.ReadOptions{}, nil, 120, 0, "", "quote"},
		{"invalid UTF-8", setCell(3, 5, "set\xffosa"), ingest.ReadOptions{}, nil, 3, 5, "species", "UTF-8"}, // RFC 3629: 0xFF never occurs in UTF-8
		{"invalid UTF-8 in the header", fixture.EditIris(func(c [][]string) { c[0][2] = "petal\xfflength" }), ingest.ReadOptions{}, nil, 0, 3, "", "UTF-8"},
		{"duplicate column name", fixture.EditIris(func(c [][]string) { c[0][1] = "sepal_length" }), ingest.ReadOptions{}, nil, 0, 2, "sepal_length", "also used by column 1"},
		{"empty column name", fixture.EditIris(func(c [][]string) { c[0][3] = "" }), ingest.ReadOptions{}, nil, 0, 4, "", "no name"},
		{"empty file", "", ingest.ReadOptions{}, ingest.ErrEmpty, 0, 0, "", ""},
		{"empty file, CSV format given", "", ingest.ReadOptions{Format: ingest.FormatCSV}, ingest.ErrEmpty, 0, 0, "", ""},
		{"only line ends", "\n\r\n\n", ingest.ReadOptions{}, ingest.ErrEmpty, 0, 0, "", ""},
		{"only a byte order mark", "\xef\xbb\xbf", ingest.ReadOptions{}, ingest.ErrEmpty, 0, 0, "", ""},
		{"header only", strings.Join(fixture.IrisColumns, ",") + "\n", ingest.ReadOptions{}, ingest.ErrNoRows, 0, 0, "", ""},
		{"header only, no line end", strings.Join(fixture.IrisColumns, ","), ingest.ReadOptions{}, ingest.ErrNoRows, 0, 0, "", ""},
		{"header only, CRLF", strings.Join(fixture.IrisColumns, ",") + "\r\n", ingest.ReadOptions{}, ingest.ErrNoRows, 0, 0, "", ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := ingest.ReadTable("iris.csv", strings.NewReader(tt.text), tt.opts)
			de := fixture.AsDataError(t, err)
			if tt.sentinel != nil && !errors.Is(err, tt.sentinel) {
				t.Errorf("error %q is not %q", err, tt.sentinel)
			}
			if de.File != "iris.csv" || de.Row != tt.row || de.Column != tt.column || de.Name != tt.colName {
				t.Errorf("error at file %q, row %d, column %d (%q); want iris.csv, row %d, column %d (%q): %v",
					de.File, de.Row, de.Column, de.Name, tt.row, tt.column, tt.colName, err)
			}
			if !strings.Contains(err.Error(), tt.contains) {
				t.Errorf("error %q does not say %q", err, tt.contains)
			}
			if !strings.HasPrefix(err.Error(), "iris.csv: ") {
				t.Errorf("error %q does not start with the file name", err)
			}
		})
	}
}

// TestReadCSVWideHeader reads headers wider than the windows the reader
// peeks through: 4 KiB at first, and its 64 KiB buffer.
func TestReadCSVWideHeader(t *testing.T) {
	tests := []struct {
		name      string
		columns   int
		firstName string
	}{
		{"10000 columns, about 170 KiB", 10000, "petal_length"},
		{"500 columns with a quoted line break in the first name", 500, "petal\nlength"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var header, row bytes.Buffer
			names := make([]string, tt.columns)
			for i := range names {
				names[i] = fmt.Sprintf("petal_length_%05d", i+1)
			}
			names[0] = tt.firstName
			for i, name := range names {
				if i > 0 {
					header.WriteByte(',')
					row.WriteByte(',')
				}
				if strings.ContainsAny(name, "\n,\"") {
					name = `"` + strings.ReplaceAll(name, `"`, `""`) + `"`
				}
				header.WriteString(name)
				row.WriteString("1.4")
			}
			text := header.String() + "\n" + row.String() + "\n"
			// Small batches: the CSV reader reserves BatchRows cells per column.
			tab, err := ingest.ReadTable("wide.csv", strings.NewReader(text), ingest.ReadOptions{BatchRows: 16})
			if err != nil {
				t.Fatal(err)
			}
			var got []string
			for _, c := range tab.Columns {
				got = append(got, c.Name)
			}
			if !slices.Equal(got, names) {
				t.Fatalf("got %d columns, first %q, last %q; want %d, %q, %q",
					len(got), got[0], got[len(got)-1], len(names), names[0], names[len(names)-1])
			}
		})
	}
}

func TestDataErrorMessage(t *testing.T) {
	cause := errors.New(`"abc" is not a number`)
	tests := []struct {
		name string
		err  *tabular.DataError
		want string
	}{
		{"every field", &tabular.DataError{File: "iris.csv", Row: 42, Line: 43, Column: 3, Name: "petal_length", Err: cause}, `iris.csv: row 42 (line 43), column 3 (petal_length): "abc" is not a number`},
		{"line when no row", &tabular.DataError{File: "iris.csv", Line: 1, Column: 2, Err: cause}, `iris.csv: line 1, column 2: "abc" is not a number`},
		{"name only", &tabular.DataError{File: "iris.csv", Name: "petal", Err: cause}, `iris.csv: column petal: "abc" is not a number`},
		{"stdin", &tabular.DataError{File: "-", Err: ingest.ErrEmpty}, "stdin: the input is empty"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tt.err.Error(); got != tt.want {
				t.Errorf("got %q, want %q", got, tt.want)
			}
			if !errors.Is(tt.err, tt.err.Err) {
				t.Error("the cause is not reachable through Unwrap")
			}
		})
	}
}

func TestParseKind(t *testing.T) {
	for _, k := range []tabular.Kind{tabular.Numeric, tabular.Categorical, tabular.Boolean} {
		t.Run(k.String(), func(t *testing.T) {
			text, err := k.MarshalText()
			if err != nil {
				t.Fatal(err)
			}
			var back tabular.Kind
			if err := back.UnmarshalText(text); err != nil || back != k {
				t.Fatalf("UnmarshalText(%q) = %v, %v; want %v", text, back, err, k)
			}
		})
	}
	t.Run("unknown", func(t *testing.T) {
		if _, err := tabular.ParseKind("ordinal"); err == nil || !strings.HasPrefix(err.Error(), "ingest: ") {
			t.Errorf("ParseKind(ordinal) error = %v, want an ingest error", err)
		}
	})
}

// A column's first cells read as numbers until a word shows it is text;
// the cells read so far keep their exact text then, whatever the number
// would print as, and a column of numbers to the end keeps none.
func TestReadCSVNumbersThenWords(t *testing.T) {
	cells := []string{"1.50", "007", "1e3", "2", "-0", "0.1", "12345678901234567890", "1e-400", "NA", "+4", ".5",
		"1.0", "3.000", "-0.0", "10.", "20.00", "1234567890123456.0", "0.10", "x", "a", "b", "c", "d", "e", "f", "g", "h", "i", "y", "z", "w", "v", "u", "t", "s", "r", "q", "p", "o", "n", "m", "l"}
	var text strings.Builder
	text.WriteString("code,n\n")
	for i, c := range cells {
		fmt.Fprintf(&text, "%s,%d.25\n", c, i)
	}
	tab := fixture.ReadCSVText(t, "in.csv", text.String(), ingest.ReadOptions{})
	code := tab.Column("code")
	if code.Kind != tabular.Categorical {
		t.Fatalf("code is %v, want categorical", code.Kind)
	}
	for i, c := range cells {
		want := c
		if c == "NA" {
			want = ""
		}
		if code.IsMissing(i) != (c == "NA") || code.Value(i) != want {
			t.Errorf("row %d: %q (missing %v), want %q", i+1, code.Value(i), code.IsMissing(i), want)
		}
	}
	n := tab.Column("n")
	if n.Kind != tabular.Numeric || n.Text != nil || n.Numbers[3] != 3.25 {
		t.Errorf("n: kind %v, %d texts, row 4 %v; want numeric, no text, 3.25", n.Kind, len(n.Text), n.Numbers[3])
	}
}
