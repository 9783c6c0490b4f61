package export

import (
	"bytes"
	"encoding/csv"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"

	"deltafit/fit/model"
	"deltafit/ingest/tabular"
)

// Which text cells the CSV writers guard: those beginning with =, +, -,
// @, tab or CR (common practice against formula injection, from memory),
// except decimal numbers, which a spreadsheet reads as numbers.
func TestFormulaLike(t *testing.T) {
	for _, tc := range []struct {
		text    string
		guarded bool
	}{
		{"=1+1", true},
		{"=HYPERLINK(\"x\")", true},
		{"@SUM(A1)", true},
		{"+cmd", true},
		{"-cmd", true},
		{"\tx", true},
		{"\rx", true},
		{"-", true},
		{"+", true},
		{"-1+2", true},
		{"-Inf", true},   // not a decimal number
		{"-1e", true},    // an exponent without digits
		{"-.", true},     // a point without digits
		{"- 1", true},    // a space is no part of a number
		{"-0x1p3", true}, // a hex float is not decimal
		{"-1", false},    // the class labels -1 and +1 of two-class data
		{"+1", false},
		{"-0.5", false},
		{"+.5", false},
		{"-5.", false},
		{"-1.5e-3", false},
		{"+2E+10", false},
		{"", false},
		{"plain", false},
		{"1-2", false},
		{"'=1+1", false}, // already guarded
		{" =1", false},   // a leading space: a spreadsheet takes it as text
	} {
		t.Run(tc.text, func(t *testing.T) {
			if got := formulaLike([]byte(tc.text)); got != tc.guarded {
				t.Fatalf("formulaLike(%q) = %v, want %v", tc.text, got, tc.guarded)
			}
		})
	}
}

// writeGuardedPredictions writes 3 rows of three classes whose labels a spreadsheet
// would run, beside a kept text column and a kept float64 column.
func writeGuardedPredictions(t *testing.T, format TableFormat, opts ...TableOption) string {
	t.Helper()
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	defer mem.AssertSize(t, 0)
	notes := array.NewStringBuilder(mem)
	defer notes.Release()
	notes.AppendValues([]string{"=cmd|' /C calc'!A0", "-0.5", "ok"}, []bool{true, true, true})
	deltas := array.NewFloat64Builder(mem)
	defer deltas.Release()
	deltas.AppendValues([]float64{-0.5, 1, -2}, nil)
	arrays := []arrow.Array{notes.NewArray(), deltas.NewArray()}
	defer func() {
		for _, a := range arrays {
			a.Release()
		}
	}()
	fields := []arrow.Field{
		{Name: "note", Type: arrow.BinaryTypes.String, Nullable: true},
		{Name: "-delta", Type: arrow.PrimitiveTypes.Float64, Nullable: true},
	}
	p := &model.Predictions{
		Labels:     []string{"=1+1", "-1", "@x"},
		Rows:       []int{0, 1, 2},
		RowNumbers: []int{1, 2, 3},
		Predicted:  []int{0, 1, 2},
		Scores:     []float64{0.5, -0.5, 0, 1, 0, -1e-300, 0, 0, 1},
	}
	var buf bytes.Buffer
	pw, err := NewPredictionWriter(&buf, format, "in.csv", p.Labels, fields, opts...)
	if err != nil {
		t.Fatal(err)
	}
	if err := pw.Write(p, arrays); err != nil {
		t.Fatal(err)
	}
	if err := pw.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.String()
}

// The predicted labels, a kept text column and a column name that a
// spreadsheet would take for formulas get a ' in CSV; the numbers (a
// kept float64 column, the scores, -0.5 in a text column, the label -1)
// stay as they are. With CSVTextAsIs(true) every cell is as it was.
func TestCSVGuardOnPredictions(t *testing.T) {
	guarded := `note,'-delta,row,predicted,score_=1+1,score_-1,score_@x
'=cmd|' /C calc'!A0,-0.5,1,'=1+1,0.5,-0.5,0
-0.5,1,2,-1,1,0,-1e-300
ok,-2,3,'@x,0,0,1
`
	asIs := `note,-delta,row,predicted,score_=1+1,score_-1,score_@x
=cmd|' /C calc'!A0,-0.5,1,=1+1,0.5,-0.5,0
-0.5,1,2,-1,1,0,-1e-300
ok,-2,3,@x,0,0,1
`
	for _, tc := range []struct {
		name string
		opts []TableOption
		want string
	}{
		{"default", nil, guarded},
		{"guard asked for", []TableOption{CSVTextAsIs(false)}, guarded},
		{"as is", []TableOption{CSVTextAsIs(true)}, asIs},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got := writeGuardedPredictions(t, TableCSV, tc.opts...)
			if got != tc.want {
				t.Fatalf("got\n%s\nwant\n%s", got, tc.want)
			}
			// What encoding/csv reads back: the guard is one ' before the text.
			rows, err := csv.NewReader(strings.NewReader(got)).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			if rows[1][3] != map[bool]string{true: "=1+1", false: "'=1+1"}[tc.want == asIs] {
				t.Fatalf("predicted label reads back as %q", rows[1][3])
			}
		})
	}
	// The guard is for CSV only: JSON Lines holds the labels as written.
	if got := writeGuardedPredictions(t, TableJSONL); !strings.Contains(got, `"predicted":"=1+1"`) || !strings.Contains(got, `"note":"=cmd|' /C calc'!A0"`) {
		t.Fatalf("JSON Lines changed the text:\n%s", got)
	}
}

// The target column that encode writes last is text: guarded, its missing
// cells still empty.
func TestCSVGuardOnPatterns(t *testing.T) {
	target := &tabular.Column{Name: "y", Kind: tabular.Categorical, Text: []string{"+SUM(1)", "", "-1"}, Missing: []bool{false, true, false}}
	for _, tc := range []struct {
		name string
		opts []TableOption
		want string
	}{
		{"default", nil, "'=u,y\n1,'+SUM(1)\n0,\n-1,-1\n"}, // the unit's name is text too
		{"as is", []TableOption{CSVTextAsIs(true)}, "=u,y\n1,+SUM(1)\n0,\n-1,-1\n"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			pw, err := NewPatternWriter(&buf, TableCSV, "in.csv", []string{"=u"}, "y", nil, tc.opts...)
			if err != nil {
				t.Fatal(err)
			}
			if err := pw.Write([]float64{1, 0, -1}, 3, func(i int) int { return i + 1 }, target, nil, nil); err != nil {
				t.Fatal(err)
			}
			if err := pw.Close(); err != nil {
				t.Fatal(err)
			}
			if buf.String() != tc.want {
				t.Fatalf("got\n%q\nwant\n%q", buf.String(), tc.want)
			}
		})
	}
}
