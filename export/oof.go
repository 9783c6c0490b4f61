package export

import (
	"encoding/csv"
	"fmt"
	"io"
	"strconv"

	"deltafit/evaluate"
	"deltafit/ingest/tabular"
)

// WriteOutOfFoldCSV writes the out-of-fold predictions of a
// cross-validation of d: a header, then one line per row per repeat, fold
// after fold: the row's 1-based number in the input, the repeat and the
// fold that held it out (from 1), its true class, the predicted class and
// one score column per class, written as predict writes them.
func WriteOutOfFoldCSV(w io.Writer, d *tabular.Dataset, oof []evaluate.FoldPredictions) error {
	cw := csv.NewWriter(w)
	header := []string{"row", "repeat", "fold", "class", "predicted"}
	for _, l := range d.Labels {
		header = append(header, "score_"+l)
	}
	if err := cw.Write(header); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	record := make([]string, len(header))
	for _, f := range oof {
		repeat, fold := strconv.Itoa(f.Repeat+1), strconv.Itoa(f.Fold+1)
		for n, class := range f.Predicted {
			row := f.Rows[n]
			record[0] = strconv.Itoa(d.Table.RowNumber(row))
			record[1], record[2] = repeat, fold
			record[3] = d.Labels[d.Classes[row]]
			record[4] = d.Labels[class]
			for j, s := range f.ScoresOf(n) {
				record[5+j] = strconv.FormatFloat(s, 'g', 6, 64)
			}
			if err := cw.Write(record); err != nil {
				return fmt.Errorf("export: %w", err)
			}
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	return nil
}
