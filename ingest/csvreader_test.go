package ingest

import (
	"fmt"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	arrowcsv "github.com/apache/arrow-go/v18/arrow/csv"
)

// cellsOf reads every batch of rr as text, a missing cell as nil, with the
// rows per batch and the reader's error.
func cellsOf(t *testing.T, rr array.RecordReader) (rows [][]*string, batches []int, err error) {
	t.Helper()
	for rr.Next() {
		rec := rr.RecordBatch()
		batches = append(batches, int(rec.NumRows()))
		for i := range int(rec.NumRows()) {
			row := make([]*string, rec.NumCols())
			for j := range row {
				col := rec.Column(j).(*array.String)
				if err := col.ValidateFull(); err != nil {
					t.Fatalf("column %d: %v", j, err)
				}
				if !col.IsNull(i) {
					v := col.Value(i)
					row[j] = &v
				}
			}
			rows = append(rows, row)
		}
	}
	return rows, batches, rr.Err()
}

// The CSV reader reads what arrow-go's CSV reader reads with a header and
// a schema of nullable strings (the reference): the same cells, the same
// missing ones, the same errors, on random texts of the characters that
// matter to CSV, a few of them malformed.
func TestCSVRecordReaderMatchesArrowCSV(t *testing.T) {
	alphabet := []string{"a", "1", ",", "\"", "\n", " ", "NA", "?", "é", ""}
	rng := rand.New(rand.NewPCG(3, 4))
	nulls := []string{"", "NA", "?"}
	failed := 0
	for k := range 3000 {
		width := 1 + rng.IntN(5)
		var b strings.Builder
		for c := range width {
			if c > 0 {
				b.WriteByte(',')
			}
			fmt.Fprintf(&b, "c%d", c)
		}
		b.WriteByte('\n')
		for range rng.IntN(12) {
			for c := range width {
				if rng.IntN(4) == 0 {
					b.WriteString(`"` + strings.Repeat(alphabet[rng.IntN(len(alphabet))], rng.IntN(3)) + `"`)
				} else {
					for range rng.IntN(3) {
						if s := alphabet[rng.IntN(len(alphabet))]; s != "," && s != "\n" && (s != "\"" || rng.IntN(20) == 0) {
							b.WriteString(s)
						}
					}
				}
				if c < width-1 {
					b.WriteByte(',')
				}
			}
			if rng.IntN(40) == 0 {
				b.WriteString(",extra") // a ragged row
			}
			b.WriteByte('\n')
		}
		text := b.String()
		fields := make([]arrow.Field, width)
		for c := range fields {
			fields[c] = arrow.Field{Name: fmt.Sprintf("c%d", c), Type: arrow.BinaryTypes.String, Nullable: true}
		}
		schema := arrow.NewSchema(fields, nil)
		chunk := 1 + rng.IntN(4)
		ref := arrowcsv.NewReader(strings.NewReader(text), schema, arrowcsv.WithHeader(true),
			arrowcsv.WithChunk(chunk), arrowcsv.WithNullReader(true, nulls...))
		wantRows, wantBatches, wantErr := cellsOf(t, ref)
		ref.Release()
		ours := newCSVRecordReader(strings.NewReader(text), schema, ',', chunk, nulls)
		gotRows, gotBatches, gotErr := cellsOf(t, ours)
		ours.Release()
		if wantErr != nil {
			failed++
		}
		if fmt.Sprint(gotErr) != fmt.Sprint(wantErr) {
			t.Fatalf("case %d %q: error %v, arrow-go's reader %v", k, text, gotErr, wantErr)
		}
		if fmt.Sprint(gotBatches) != fmt.Sprint(wantBatches) {
			t.Fatalf("case %d %q: batches %v, arrow-go's reader %v", k, text, gotBatches, wantBatches)
		}
		if show(gotRows) != show(wantRows) {
			t.Fatalf("case %d %q:\nrows %s\narrow-go's reader %s", k, text, show(gotRows), show(wantRows))
		}
	}
	if failed < 100 {
		t.Fatalf("only %d of the texts are malformed", failed)
	}
}

func show(rows [][]*string) string {
	var b strings.Builder
	for _, row := range rows {
		for _, cell := range row {
			if cell == nil {
				b.WriteString("<null> ")
			} else {
				fmt.Fprintf(&b, "%q ", *cell)
			}
		}
		b.WriteString("| ")
	}
	return b.String()
}

// A batch's columns are slices of three shared buffers, so a batch costs
// the same few objects per column whatever its rows; each column still
// reads as its own array, nulls and all.
func TestCSVRecordReaderSharedBuffers(t *testing.T) {
	text := "a,b,c\n1,NA,x\n,2,\"y,z\"\n3,4,\n"
	schema := arrow.NewSchema([]arrow.Field{
		{Name: "a", Type: arrow.BinaryTypes.String, Nullable: true},
		{Name: "b", Type: arrow.BinaryTypes.String, Nullable: true},
		{Name: "c", Type: arrow.BinaryTypes.String, Nullable: true},
	}, nil)
	rr := newCSVRecordReader(strings.NewReader(text), schema, ',', 10, NullValues)
	defer rr.Release()
	if !rr.Next() {
		t.Fatal(rr.Err())
	}
	rec := rr.RecordBatch()
	want := []string{`["1" (null) "3"]`, `[(null) "2" "4"]`, `["x" "y,z" (null)]`}
	for j, w := range want {
		col := rec.Column(j).(*array.String)
		if got := col.String(); got != w || col.NullN() != 1 {
			t.Errorf("column %d: %s with %d nulls, want %s with 1", j, got, col.NullN(), w)
		}
		if col.Data().Offset() != 3*j || col.Data().Buffers()[2] != rec.Column(0).Data().Buffers()[2] {
			t.Errorf("column %d does not share the batch's buffers", j)
		}
	}
	if rr.Next() || rr.Err() != nil {
		t.Fatalf("a second batch, or error %v", rr.Err())
	}
}
