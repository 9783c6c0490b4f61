package export

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet/file"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"

	"deltafit/fit/model"
	"deltafit/ingest/tabular"
)

// appendCSVField quotes exactly as encoding/csv does (the standard
// library's writer is the reference), on random fields made of the
// characters that matter to quoting.
func TestAppendCSVFieldMatchesEncodingCSV(t *testing.T) {
	alphabet := []string{"a", "1", ",", `"`, "\r", "\n", " ", "\t", `\`, ".", "é", "\u00a0", "\u2028"}
	rng := rand.New(rand.NewPCG(1, 2))
	fields := []string{"", `\.`, `\.x`, " lead", "trail ", `"`, `""`, "a,b"}
	for range 5000 {
		var b strings.Builder
		for range rng.IntN(6) {
			b.WriteString(alphabet[rng.IntN(len(alphabet))])
		}
		fields = append(fields, b.String())
	}
	for _, f := range fields {
		var want bytes.Buffer
		cw := csv.NewWriter(&want)
		if err := cw.Write([]string{f, "x"}); err != nil {
			t.Fatal(err)
		}
		cw.Flush()
		got := append(appendCSVField(nil, []byte(f)), ",x\n"...)
		if !bytes.Equal(got, want.Bytes()) {
			t.Fatalf("field %q: wrote %q, encoding/csv writes %q", f, got, want.Bytes())
		}
	}
}

// appendJSONString writes what encoding/json reads back as the same text.
func TestAppendJSONString(t *testing.T) {
	for _, s := range []string{"", "plain", `"quoted"`, `back\slash`, "line\nbreak\r\ttab", "\x00\x1f\x7f", "é ü 中", "<&>", "\u2028"} {
		b := appendJSONString(nil, s)
		var back string
		if err := json.Unmarshal(b, &back); err != nil || back != s {
			t.Fatalf("%q written as %s reads back as %q (%v)", s, b, back, err)
		}
	}
}

// keptArrays are three input columns to pass through, of 4 rows: an int64
// id, a dictionary of strings and a float32 with a null, with their fields.
func keptArrays(t *testing.T, mem memory.Allocator) ([]arrow.Field, []arrow.Array) {
	t.Helper()
	ids := array.NewInt64Builder(mem)
	defer ids.Release()
	ids.AppendValues([]int64{9007199254740993, -1, 3, 4}, nil) // 2^53+1 does not survive a float64
	dictType := &arrow.DictionaryType{IndexType: arrow.PrimitiveTypes.Int8, ValueType: arrow.BinaryTypes.String}
	sites := array.NewDictionaryBuilder(mem, dictType).(*array.BinaryDictionaryBuilder)
	defer sites.Release()
	for _, s := range []string{"north", `a "quoted", site`, "", "north"} {
		if s == "" {
			sites.AppendNull()
			continue
		}
		if err := sites.AppendString(s); err != nil {
			t.Fatal(err)
		}
	}
	weights := array.NewFloat32Builder(mem)
	defer weights.Release()
	weights.AppendValues([]float32{0.1, 2.5, 0, 1e-3}, []bool{true, true, false, true})
	arrays := []arrow.Array{ids.NewArray(), sites.NewArray(), weights.NewArray()}
	input := []arrow.Field{{Name: "id", Type: arrow.PrimitiveTypes.Int64}, {Name: "site", Type: dictType}, {Name: "weight", Type: arrow.PrimitiveTypes.Float32}}
	fields := make([]arrow.Field, len(input))
	for i, f := range input {
		var err error
		if fields[i], err = KeepField(f); err != nil {
			t.Fatal(err)
		}
	}
	return fields, arrays
}

// testPredictions are predictions of 4 rows of two classes, numbered as
// rows left after others were left out.
func testPredictions() *model.Predictions {
	return &model.Predictions{
		Labels:     []string{"no", "yes"},
		Rows:       []int{0, 1, 2, 3},
		RowNumbers: []int{2, 3, 5, 8},
		Predicted:  []int{1, 0, 0, 1},
		Scores:     []float64{0.1, 0.9, 2.0 / 3, 1.0 / 3, 1, 0, 1e-300, 1 - 1e-16},
	}
}

func writePredictions(t *testing.T, format TableFormat, batches int) []byte {
	t.Helper()
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	defer mem.AssertSize(t, 0)
	fields, arrays := keptArrays(t, mem)
	defer func() {
		for _, a := range arrays {
			a.Release()
		}
	}()
	var buf bytes.Buffer
	p := testPredictions()
	pw, err := NewPredictionWriter(&buf, format, "in.csv", p.Labels, fields)
	if err != nil {
		t.Fatal(err)
	}
	// The same rows written in one batch or in two give the same table.
	for lo, step := 0, 4/batches; lo < 4; lo += step {
		part := &model.Predictions{Labels: p.Labels, Rows: p.Rows[lo : lo+step], RowNumbers: p.RowNumbers[lo : lo+step],
			Predicted: p.Predicted[lo : lo+step], Scores: p.Scores[2*lo : 2*(lo+step)]}
		kept := make([]arrow.Array, len(arrays))
		for i, a := range arrays {
			kept[i] = array.NewSlice(a, int64(lo), int64(lo+step))
		}
		if err := pw.Write(part, kept); err != nil {
			t.Fatal(err)
		}
		for _, a := range kept {
			a.Release()
		}
	}
	if err := pw.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// The CSV predictions: kept columns first as their text, the input's row
// numbers, scores in the shortest form that reads back exactly.
func TestPredictionsCSV(t *testing.T) {
	got := string(writePredictions(t, TableCSV, 2))
	want := `id,site,weight,row,predicted,score_no,score_yes
9007199254740993,north,0.1,2,yes,0.1,0.9
-1,"a ""quoted"", site",2.5,3,no,0.6666666666666666,0.3333333333333333
3,,,5,no,1,0
4,north,0.001,8,yes,1e-300,0.9999999999999999
`
	if got != want {
		t.Fatalf("got\n%s\nwant\n%s", got, want)
	}
	if again := string(writePredictions(t, TableCSV, 1)); again != got {
		t.Fatal("one batch and two batches give different CSV")
	}
	for _, line := range strings.Split(strings.TrimSpace(got), "\n")[1:] {
		fields, err := csv.NewReader(strings.NewReader(line)).Read()
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range fields[5:] {
			x, err := strconv.ParseFloat(f, 64)
			if err != nil || strconv.FormatFloat(x, 'g', -1, 64) != f {
				t.Fatalf("score %q does not read back as itself", f)
			}
		}
	}
}

// JSON Lines: one object per row, keys in column order, missing cells
// null, numbers as JSON numbers that encoding/json reads back exactly.
func TestPredictionsJSONL(t *testing.T) {
	out := writePredictions(t, TableJSONL, 2)
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	if len(lines) != 4 {
		t.Fatalf("%d lines, want 4:\n%s", len(lines), out)
	}
	if want := `{"id":-1,"site":"a \"quoted\", site","weight":2.5,"row":3,"predicted":"no","score_no":0.6666666666666666,"score_yes":0.3333333333333333}`; lines[1] != want {
		t.Fatalf("line 2 %s\nwant      %s", lines[1], want)
	}
	p := testPredictions()
	for n, line := range lines {
		dec := json.NewDecoder(strings.NewReader(line))
		dec.UseNumber()
		var row map[string]any
		if err := dec.Decode(&row); err != nil {
			t.Fatalf("line %d: %v", n+1, err)
		}
		if n == 2 && (row["site"] != nil || row["weight"] != nil) {
			t.Fatalf("line 3: missing cells %v %v, want null", row["site"], row["weight"])
		}
		for j, l := range p.Labels {
			x, err := row["score_"+l].(json.Number).Float64()
			if err != nil || x != p.ScoresOf(n)[j] {
				t.Fatalf("line %d score_%s %v, want %v", n+1, l, row["score_"+l], p.ScoresOf(n)[j])
			}
		}
	}
	if row0 := lines[0]; !strings.HasPrefix(row0, `{"id":9007199254740993,`) {
		t.Fatalf("an int64 id is not written exactly: %s", row0)
	}
}

// checkPredictionRecord checks a table read back from Arrow or Parquet:
// the kept columns with their types (a dictionary's values' type) and
// values, int64 row numbers, float64 scores equal to the bit.
func checkPredictionRecord(t *testing.T, tbl arrow.Table) {
	t.Helper()
	wantTypes := []arrow.DataType{arrow.PrimitiveTypes.Int64, arrow.BinaryTypes.String, arrow.PrimitiveTypes.Float32,
		arrow.PrimitiveTypes.Int64, arrow.BinaryTypes.String, arrow.PrimitiveTypes.Float64, arrow.PrimitiveTypes.Float64}
	wantNames := []string{"id", "site", "weight", "row", "predicted", "score_no", "score_yes"}
	if int(tbl.NumCols()) != len(wantNames) || tbl.NumRows() != 4 {
		t.Fatalf("%d columns × %d rows, want 7 × 4: %s", tbl.NumCols(), tbl.NumRows(), tbl.Schema())
	}
	values := make([][]string, tbl.NumCols())
	for j := range int(tbl.NumCols()) {
		col := tbl.Column(j)
		if col.Name() != wantNames[j] || !arrow.TypeEqual(col.DataType(), wantTypes[j]) {
			t.Fatalf("column %d is %s %s, want %s %s", j+1, col.Name(), col.DataType(), wantNames[j], wantTypes[j])
		}
		for _, chunk := range col.Data().Chunks() {
			for i := range chunk.Len() {
				values[j] = append(values[j], chunk.ValueStr(i))
			}
		}
	}
	p := testPredictions()
	want := [][]string{
		{"9007199254740993", "-1", "3", "4"},
		{"north", `a "quoted", site`, array.NullValueStr, "north"},
		{"0.1", "2.5", array.NullValueStr, "0.001"},
		{"2", "3", "5", "8"},
		{"yes", "no", "no", "yes"},
	}
	for j, w := range want {
		if strings.Join(values[j], "|") != strings.Join(w, "|") {
			t.Fatalf("column %s: %q, want %q", wantNames[j], values[j], w)
		}
	}
	for j := range p.Labels {
		var scores []float64
		for _, chunk := range tbl.Column(5 + j).Data().Chunks() {
			scores = append(scores, chunk.(*array.Float64).Float64Values()...)
		}
		for n, s := range scores {
			if math.Float64bits(s) != math.Float64bits(p.ScoresOf(n)[j]) {
				t.Fatalf("score %d of row %d: %v, want %v", j, n+1, s, p.ScoresOf(n)[j])
			}
		}
	}
}

// An Arrow IPC stream, read back by arrow-go's own stream reader.
func TestPredictionsArrowStream(t *testing.T) {
	out := writePredictions(t, TableArrow, 2)
	rdr, err := ipc.NewReader(bytes.NewReader(out))
	if err != nil {
		t.Fatal(err)
	}
	defer rdr.Release()
	var recs []arrow.RecordBatch
	for rdr.Next() {
		rec := rdr.RecordBatch()
		rec.Retain()
		recs = append(recs, rec)
	}
	if err := rdr.Err(); err != nil {
		t.Fatal(err)
	}
	if len(recs) != 2 {
		t.Fatalf("%d record batches, want one per Write", len(recs))
	}
	tbl := array.NewTableFromRecords(rdr.Schema(), recs)
	defer tbl.Release()
	for _, r := range recs {
		r.Release()
	}
	checkPredictionRecord(t, tbl)
}

// A Parquet file, read back by arrow-go's Parquet reader.
func TestPredictionsParquet(t *testing.T) {
	out := writePredictions(t, TableParquet, 2)
	pf, err := file.NewParquetReader(bytes.NewReader(out))
	if err != nil {
		t.Fatal(err)
	}
	defer pf.Close()
	if pf.NumRowGroups() != 1 {
		t.Fatalf("%d row groups, want the two batches in one", pf.NumRowGroups())
	}
	fr, err := pqarrow.NewFileReader(pf, pqarrow.ArrowReadProperties{}, memory.DefaultAllocator)
	if err != nil {
		t.Fatal(err)
	}
	tbl, err := fr.ReadTable(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	defer tbl.Release()
	checkPredictionRecord(t, tbl)
}

// A table of no rows is still a table: its header, an empty stream or an
// empty Parquet file.
func TestPredictionsNoRows(t *testing.T) {
	for _, format := range TableFormats {
		var buf bytes.Buffer
		pw, err := NewPredictionWriter(&buf, format, "in.csv", []string{"a", "b"}, nil)
		if err != nil {
			t.Fatal(err)
		}
		if err := pw.Close(); err != nil {
			t.Fatalf("%s: %v", format, err)
		}
		switch format {
		case TableCSV:
			if buf.String() != "row,predicted,score_a,score_b\n" {
				t.Fatalf("csv: %q", buf.String())
			}
		case TableJSONL:
			if buf.Len() != 0 {
				t.Fatalf("jsonl: %q", buf.String())
			}
		case TableArrow:
			rdr, err := ipc.NewReader(bytes.NewReader(buf.Bytes()))
			if err != nil {
				t.Fatal(err)
			}
			if rdr.Next() || rdr.Schema().NumFields() != 4 {
				t.Fatalf("arrow: a batch, or schema %s", rdr.Schema())
			}
			rdr.Release()
		case TableParquet:
			pf, err := file.NewParquetReader(bytes.NewReader(buf.Bytes()))
			if err != nil {
				t.Fatal(err)
			}
			if pf.NumRows() != 0 {
				t.Fatalf("parquet: %d rows", pf.NumRows())
			}
			pf.Close()
		}
	}
}

// A kept column named like an output column is refused; JSON refuses
// what it cannot hold, naming the input's row and the column.
func TestTableWriterRefusals(t *testing.T) {
	if _, err := NewPredictionWriter(&bytes.Buffer{}, TableCSV, "in.csv", []string{"a", "b"},
		[]arrow.Field{{Name: "row", Type: arrow.PrimitiveTypes.Int64}}); err == nil || !strings.Contains(err.Error(), `two columns named "row"`) {
		t.Fatalf("kept column row: %v", err)
	}
	if _, err := KeepField(arrow.Field{Name: "when", Type: arrow.FixedWidthTypes.Date32}); err == nil {
		t.Fatal("a date column is passed through, which the readers refuse")
	}
	if _, err := ParseTableFormat("xml"); err == nil {
		t.Fatal("xml is a table format")
	}
	mem := memory.NewGoAllocator()
	bad := array.NewStringBuilder(mem)
	bad.AppendValues([]string{"ok", "\xff"}, nil)
	nan := array.NewFloat64Builder(mem)
	nan.AppendValues([]float64{1, math.NaN()}, nil)
	for _, tc := range []struct {
		arr  arrow.Array
		want string
	}{
		{bad.NewArray(), "in.csv: row 3, column x: the text is not valid UTF-8"},
		{nan.NewArray(), "in.csv: row 3, column x: NaN is not a finite number, which JSON cannot hold"},
	} {
		f, err := KeepField(arrow.Field{Name: "x", Type: tc.arr.DataType()})
		if err != nil {
			t.Fatal(err)
		}
		p := &model.Predictions{Labels: []string{"a", "b"}, Rows: []int{0, 1}, RowNumbers: []int{1, 3}, Predicted: []int{0, 0}, Scores: []float64{1, 0, 1, 0}}
		var buf bytes.Buffer
		pw, err := NewPredictionWriter(&buf, TableJSONL, "in.csv", p.Labels, []arrow.Field{f})
		if err != nil {
			t.Fatal(err)
		}
		err = pw.Write(p, []arrow.Array{tc.arr})
		if _, ok := err.(*tabular.DataError); !ok || err.Error()[:len(tc.want)] != tc.want {
			t.Fatalf("error %v, want %q", err, tc.want)
		}
	}
}

// Patterns: kept columns, one column per unit named after it, the target
// as text with missing cells empty.
func TestPatternWriterCSV(t *testing.T) {
	var buf bytes.Buffer
	pw, err := NewPatternWriter(&buf, TableCSV, "in.csv", []string{"x>1.5", "c=a,b", "c:missing"}, "y", nil)
	if err != nil {
		t.Fatal(err)
	}
	target := &tabular.Column{Name: "y", Kind: tabular.Numeric, Numbers: []float64{1, 0}, Missing: []bool{false, true}}
	if err := pw.Write([]float64{1, 0, 0, -0.25, 1, 1}, 2, func(i int) int { return i + 1 }, target, nil, nil); err != nil {
		t.Fatal(err)
	}
	if err := pw.Close(); err != nil {
		t.Fatal(err)
	}
	want := "x>1.5,\"c=a,b\",c:missing,y\n1,0,0,1\n-0.25,1,1,\n"
	if buf.String() != want {
		t.Fatalf("got\n%s\nwant\n%s", buf.String(), want)
	}
}

// Kept columns follow take, the input rows the patterns are of, in text
// and in Arrow (where an int64 column stays int64).
func TestPatternWriterTake(t *testing.T) {
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	defer mem.AssertSize(t, 0)
	fields, arrays := keptArrays(t, mem)
	defer func() {
		for _, a := range arrays {
			a.Release()
		}
	}()
	take := []int{3, 1}
	write := func(format TableFormat) []byte {
		var buf bytes.Buffer
		pw, err := NewPatternWriter(&buf, format, "in.csv", []string{"u"}, "", fields)
		if err != nil {
			t.Fatal(err)
		}
		if err := pw.Write([]float64{0.5, 1}, 2, func(i int) int { return take[i] + 1 }, nil, arrays, take); err != nil {
			t.Fatal(err)
		}
		if err := pw.Close(); err != nil {
			t.Fatal(err)
		}
		return buf.Bytes()
	}
	if got, want := string(write(TableCSV)), "id,site,weight,u\n4,north,0.001,0.5\n-1,\"a \"\"quoted\"\", site\",2.5,1\n"; got != want {
		t.Fatalf("got\n%s\nwant\n%s", got, want)
	}
	rdr, err := ipc.NewReader(bytes.NewReader(write(TableArrow)))
	if err != nil {
		t.Fatal(err)
	}
	defer rdr.Release()
	if !rdr.Next() {
		t.Fatal(rdr.Err())
	}
	ids, ok := rdr.RecordBatch().Column(0).(*array.Int64)
	if !ok || ids.Len() != 2 || ids.Value(0) != 4 || ids.Value(1) != -1 {
		t.Fatalf("ids %v", rdr.RecordBatch().Column(0))
	}
}
