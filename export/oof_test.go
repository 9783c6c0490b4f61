package export

import (
	"bufio"
	"bytes"
	"encoding/json"
	"reflect"
	"slices"
	"testing"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/ingest"
)

// oofRow is one line of an out-of-fold file, read back.
type oofRow struct {
	row, repeat, fold int
	class, predicted  string
	firstScore        float64
}

// readOOF reads an out-of-fold table back: CSV, Arrow and Parquet through
// ingest, JSON Lines line by line.
func readOOF(t *testing.T, format TableFormat, b []byte, firstLabel string) []oofRow {
	t.Helper()
	var rows []oofRow
	if format == TableJSONL {
		sc := bufio.NewScanner(bytes.NewReader(b))
		for sc.Scan() {
			var line map[string]any
			if err := json.Unmarshal(sc.Bytes(), &line); err != nil {
				t.Fatalf("%s: %v", sc.Text(), err)
			}
			rows = append(rows, oofRow{
				row: int(line["row"].(float64)), repeat: int(line["repeat"].(float64)), fold: int(line["fold"].(float64)),
				class: line["class"].(string), predicted: line["predicted"].(string), firstScore: line["score_"+firstLabel].(float64),
			})
		}
		return rows
	}
	back, err := ingest.ReadTable("oof", bytes.NewReader(b), ingest.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for i := range back.Rows {
		rows = append(rows, oofRow{
			row: int(back.Column("row").Numbers[i]), repeat: int(back.Column("repeat").Numbers[i]), fold: int(back.Column("fold").Numbers[i]),
			class: back.Column("class").Text[i], predicted: back.Column("predicted").Text[i], firstScore: back.Column("score_" + firstLabel).Numbers[i],
		})
	}
	return rows
}

// The out-of-fold table read back, in every format, holds every row once
// per repeat, in the fold that held it out, with its true class and the
// scores exactly; its classes tally to the pooled confusion table.
func TestOutOfFoldRoundTrip(t *testing.T) {
	d := irisDataset(t)
	learner := evaluate.Learner{Fit: fit.Options{Seed: 2, Epochs: 20}}
	var oof []evaluate.FoldPredictions
	var splits [][][]int
	pooled := evaluate.NewConfusion(d.Labels)
	for r := range 2 {
		folds, err := evaluate.Folds(d, 4, 2, uint64(r))
		if err != nil {
			t.Fatal(err)
		}
		res, err := evaluate.CrossValidate(d, folds, evaluate.LearnerMethod("delta", learner, d))
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range res.OutOfFold {
			f.Repeat = r
			oof = append(oof, f)
		}
		splits = append(splits, folds)
		if err := pooled.Merge(res.Confusion); err != nil {
			t.Fatal(err)
		}
	}
	for _, format := range TableFormats {
		t.Run(string(format), func(t *testing.T) {
			var buf bytes.Buffer
			if err := WriteOutOfFold(&buf, format, "iris.csv", d, oof); err != nil {
				t.Fatal(err)
			}
			rows := readOOF(t, format, buf.Bytes(), d.Labels[0])
			if want := 2 * d.Table.Rows; len(rows) != want {
				t.Fatalf("%d rows read back, want %d", len(rows), want)
			}
			tally := evaluate.NewConfusion(d.Labels)
			k := 0
			for _, f := range oof {
				for n, r := range f.Rows {
					got := rows[k]
					k++
					if !slices.Contains(splits[got.repeat-1][got.fold-1], got.row-1) || got.row-1 != r {
						t.Fatalf("line %d: row %d in fold %d of repeat %d, want row %d", k, got.row, got.fold, got.repeat, r+1)
					}
					if got.class != d.Labels[d.Classes[r]] {
						t.Fatalf("line %d: class %q, the data say %q", k, got.class, d.Labels[d.Classes[r]])
					}
					if got.firstScore != f.ScoresOf(n)[0] {
						t.Fatalf("line %d: score %v, want %v exactly", k, got.firstScore, f.ScoresOf(n)[0])
					}
					tally.Add(slices.Index(d.Labels, got.class), slices.Index(d.Labels, got.predicted))
				}
			}
			if !reflect.DeepEqual(tally.Matrix, pooled.Matrix) {
				t.Errorf("the file tallies to %v, the pooled table is %v", tally.Matrix, pooled.Matrix)
			}
		})
	}
	var csv bytes.Buffer
	if err := WriteOutOfFold(&csv, TableCSV, "iris.csv", d, oof); err != nil {
		t.Fatal(err)
	}
	header, _, _ := bytes.Cut(csv.Bytes(), []byte("\n"))
	if got := string(header); got != "row,repeat,fold,class,predicted,score_setosa,score_versicolor,score_virginica" {
		t.Errorf("CSV header %s", got)
	}
}
