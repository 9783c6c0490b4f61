package export

import (
	"encoding/csv"
	"fmt"
	"io"
	"strconv"

	"deltafit/fit/model"
)

// WritePredictionsCSV writes a header and one line per row: the 1-based row
// number, the predicted label and one score column per class.
func WritePredictionsCSV(w io.Writer, p *model.Predictions) error {
	cw := csv.NewWriter(w)
	header := []string{"row", "predicted"}
	for _, l := range p.Labels {
		header = append(header, "score_"+l)
	}
	if err := cw.Write(header); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	record := make([]string, len(header))
	for n, class := range p.Predicted {
		record[0] = strconv.Itoa(p.RowNumber(n))
		record[1] = p.Labels[class]
		for j, s := range p.ScoresOf(n) {
			record[2+j] = strconv.FormatFloat(s, 'g', 6, 64)
		}
		if err := cw.Write(record); err != nil {
			return fmt.Errorf("export: %w", err)
		}
	}
	cw.Flush()
	if err := cw.Error(); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	return nil
}
