package export

import (
	"encoding/csv"
	"fmt"
	"io"
	"strconv"

	"deltafit/ingest"
)

// Predictions are a model's classes and per-class scores for table rows.
type Predictions struct {
	Labels    []string
	Predicted []int       // class index per row
	Scores    [][]float64 // one score per class per row
}

// Predict encodes every row of t with the model's plan and scores it.
// Warnings about values the plan was not fitted on are in the stats.
func (m *Model) Predict(t *ingest.Table) (*Predictions, ingest.EncodeStats, error) {
	cols, err := m.Plan.Bind(t)
	if err != nil {
		return nil, ingest.EncodeStats{}, err
	}
	width := m.Plan.Width()
	values, stats := m.Plan.EncodeTo(nil, cols, nil)
	p := &Predictions{Labels: m.Labels, Predicted: make([]int, t.Rows), Scores: make([][]float64, t.Rows)}
	for i := 0; i < t.Rows; i++ {
		x := values[i*width : (i+1)*width]
		p.Scores[i] = m.Network.ScoresTo(nil, x)
		p.Predicted[i] = m.Network.Classify(x)
	}
	return p, stats, nil
}

// WritePredictionsCSV writes a header and one line per row: the 1-based row
// number, the predicted label and one score column per class.
func WritePredictionsCSV(w io.Writer, p *Predictions) error {
	cw := csv.NewWriter(w)
	header := []string{"row", "predicted"}
	for _, l := range p.Labels {
		header = append(header, "score_"+l)
	}
	if err := cw.Write(header); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	record := make([]string, len(header))
	for i, class := range p.Predicted {
		record[0] = strconv.Itoa(i + 1)
		record[1] = p.Labels[class]
		for j, s := range p.Scores[i] {
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
