package ingest_test

import (
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow/memory"

	"deltafit/ingest"
	"deltafit/ingest/tabular"
)

// readBatches reads the named columns of text in batches of batchRows rows
// and joins the batches into one table, checking each batch's row numbers.
func readBatches(t *testing.T, text string, columns []string, opts ingest.ReadOptions) (*tabular.Table, error) {
	t.Helper()
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	defer mem.AssertSize(t, 0)
	opts.Allocator = mem
	rr, err := ingest.NewRecordReader("data.csv", strings.NewReader(text), opts)
	if err != nil {
		return nil, err
	}
	defer rr.Release()
	tr, err := ingest.NewTableReader("data.csv", rr, columns, opts)
	if err != nil {
		return nil, err
	}
	defer tr.Close()
	var joined *tabular.Table
	for tr.Next() {
		b := tr.Table()
		for i, c := range b.Columns {
			if want := tr.Schema().FieldIndices(c.Name)[0] + 1; b.Position(c.Name) != want || b.ColumnNumbers[i] != want {
				t.Fatalf("column %s at position %d, want %d", c.Name, b.Position(c.Name), want)
			}
		}
		for i := range b.Rows {
			if want := tr.Rows() - b.Rows + i + 1; b.RowNumber(i) != want {
				t.Fatalf("batch row %d numbered %d, want %d", i, b.RowNumber(i), want)
			}
		}
		joined = appendTable(joined, b)
	}
	if err := tr.Err(); err != nil {
		return nil, err
	}
	joined.RowNumbers = nil
	return joined, nil
}

// appendTable returns t with the rows of b after its own, copying b.
func appendTable(t, b *tabular.Table) *tabular.Table {
	if t == nil {
		t = &tabular.Table{Name: b.Name}
		for _, c := range b.Columns {
			t.Columns = append(t.Columns, &tabular.Column{Name: c.Name, Kind: c.Kind})
		}
	}
	for i, c := range b.Columns {
		dst := t.Columns[i]
		if c.Kind == tabular.Categorical {
			dst.Text = append(dst.Text, c.Text...)
		} else {
			dst.Numbers = append(dst.Numbers, c.Numbers...)
		}
		if c.Missing != nil && dst.Missing == nil {
			dst.Missing = make([]bool, t.Rows)
		}
		if dst.Missing != nil {
			for r := range b.Rows {
				dst.Missing = append(dst.Missing, c.IsMissing(r))
			}
		}
	}
	t.Rows += b.Rows
	return t
}

// Read in batches of any size with the kinds a model gives, the columns
// hold what Collect reads from the whole file.
func TestTableReaderMatchesCollect(t *testing.T) {
	data, err := os.ReadFile(filepath.Join("..", "testdata", "iris.csv"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(data)
	whole, err := ingest.ReadTable("data.csv", strings.NewReader(text), ingest.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	expected := map[string]tabular.Kind{}
	for _, c := range whole.Columns {
		expected[c.Name] = c.Kind
	}
	columns := []string{"petal_width", "species", "sepal_length"} // a different order from the file's
	want := &tabular.Table{Name: "data.csv", Rows: whole.Rows}
	for _, c := range columns {
		want.Columns = append(want.Columns, whole.Column(c))
	}
	for _, batchRows := range []int{1, 7, 150, 4096} {
		got, err := readBatches(t, text, columns, ingest.ReadOptions{Expected: expected, BatchRows: batchRows})
		if err != nil {
			t.Fatalf("batches of %d: %v", batchRows, err)
		}
		requireTablesEqual(t, want, got)
	}
}

// Without a given kind a text column is categorical, whatever it holds:
// a batch cannot see the rows that would decide.
func TestTableReaderKinds(t *testing.T) {
	text := "id,x,flag\n1,0.5,true\n2,NA,false\n3,2,\n"
	got, err := readBatches(t, text, []string{"id", "x", "flag", "absent"}, ingest.ReadOptions{
		BatchRows: 2,
		Kinds:     map[string]tabular.Kind{"x": tabular.Numeric},
		Expected:  map[string]tabular.Kind{"flag": tabular.Boolean, "id": tabular.Numeric, "x": tabular.Categorical},
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(got.Columns) != 3 {
		t.Fatalf("%d columns, want 3: an absent name is left out", len(got.Columns))
	}
	id, x, flag := got.Columns[0], got.Columns[1], got.Columns[2]
	if id.Kind != tabular.Numeric || !slices.Equal(id.Numbers, []float64{1, 2, 3}) {
		t.Errorf("id: %+v", id)
	}
	if x.Kind != tabular.Numeric || !slices.Equal(x.Numbers, []float64{0.5, 0, 2}) || !slices.Equal(x.Missing, []bool{false, true, false}) {
		t.Errorf("x (declared numeric, which wins over the model's kind): %+v", x)
	}
	if flag.Kind != tabular.Boolean || !slices.Equal(flag.Numbers, []float64{1, 0, 0}) || !flag.IsMissing(2) {
		t.Errorf("flag: %+v", flag)
	}
	plain, err := readBatches(t, text, []string{"id"}, ingest.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if c := plain.Columns[0]; c.Kind != tabular.Categorical || !slices.Equal(c.Text, []string{"1", "2", "3"}) {
		t.Errorf("id without a kind: %+v, want categorical text", c)
	}
}

// A bad cell in a later batch is named by its row in the whole input; an
// input with a header only is an error; underflows are counted over every
// batch in one warning.
func TestTableReaderErrors(t *testing.T) {
	numeric := ingest.ReadOptions{BatchRows: 2, Expected: map[string]tabular.Kind{"x": tabular.Numeric}}
	_, err := readBatches(t, "x,y\n1,a\n2,b\n3,c\nfour,d\n", []string{"x"}, numeric)
	var de *tabular.DataError
	if !errors.As(err, &de) || de.Row != 4 || de.Name != "x" || !strings.Contains(err.Error(), `"four" is not a number in a column the model reads as numeric`) {
		t.Fatalf("error %v, want row 4 of column x", err)
	}
	_, err = readBatches(t, "x,y\n", []string{"x"}, numeric)
	if !errors.Is(err, ingest.ErrNoRows) {
		t.Fatalf("header only: %v, want ErrNoRows", err)
	}
	_, err = readBatches(t, "x,y\n1,a\n2\n", []string{"x"}, numeric)
	if !errors.As(err, &de) || de.Row != 2 || !strings.Contains(err.Error(), "different number of fields") {
		t.Fatalf("ragged row: %v", err)
	}
	var warnings []string
	opts := numeric
	opts.Warn = func(w *tabular.DataError) { warnings = append(warnings, w.Error()) }
	if _, err := readBatches(t, "x\n1\n1e-400\n2\n3\n2e-999\n", []string{"x"}, opts); err != nil {
		t.Fatal(err)
	}
	if len(warnings) != 1 || !strings.Contains(warnings[0], `row 2, column 1 (x): 2 cells (first "1e-400")`) {
		t.Fatalf("warnings %q, want one for 2 cells from row 2", warnings)
	}
}

// Closing a reader in the middle of its input stops its reading ahead and
// releases every batch it held.
func TestTableReaderCloseEarly(t *testing.T) {
	mem := memory.NewCheckedAllocator(memory.NewGoAllocator())
	defer mem.AssertSize(t, 0)
	text := "x\n" + strings.Repeat("1\n", 1000)
	opts := ingest.ReadOptions{Allocator: mem, BatchRows: 10, Expected: map[string]tabular.Kind{"x": tabular.Numeric}}
	rr, err := ingest.NewRecordReader("data.csv", strings.NewReader(text), opts)
	if err != nil {
		t.Fatal(err)
	}
	defer rr.Release()
	tr, err := ingest.NewTableReader("data.csv", rr, []string{"x"}, opts)
	if err != nil {
		t.Fatal(err)
	}
	if !tr.Next() || tr.Table().Rows != 10 || tr.RecordBatch().NumRows() != 10 {
		t.Fatal("no first batch of 10 rows")
	}
	tr.Close()
	tr.Close()
	if tr.Next() {
		t.Fatal("a batch after Close")
	}
}
