package export

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"

	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// Predictions are a model's classes and per-class scores for table rows.
type Predictions struct {
	Labels    []string
	Predicted []int       // class index per row
	Scores    [][]float64 // one score per class per row
}

// Predict encodes every row of t with the model's plan and scores it.
// Warnings about values the plan was not fitted on are in the stats.
func (m *Model) Predict(t *tabular.Table) (*Predictions, encode.Stats, error) {
	cols, err := m.Plan.Bind(t)
	if err != nil {
		return nil, encode.Stats{}, err
	}
	width := m.Plan.Width()
	p := &Predictions{Labels: m.Labels, Predicted: make([]int, t.Rows), Scores: make([][]float64, t.Rows)}
	// Rows are encoded a block at a time, so that a plan of many units (up
	// to encode.MaxWidth) needs one block of patterns, not one per row.
	block := max(1, encodeBlockValues/max(1, width))
	var stats encode.Stats
	var values []float64
	rows := make([]int, 0, min(block, t.Rows))
	for lo := 0; lo < t.Rows; lo += block {
		rows = rows[:0]
		for r := lo; r < min(lo+block, t.Rows); r++ {
			rows = append(rows, r)
		}
		var blockStats encode.Stats
		values, blockStats = m.Plan.EncodeTo(values, cols, rows)
		stats.Merge(blockStats)
		for n, r := range rows {
			x := values[n*width : (n+1)*width]
			p.Scores[r] = m.Network.ScoresTo(nil, x)
			p.Predicted[r] = m.Network.Classify(x)
			for _, s := range p.Scores[r] {
				if math.IsNaN(s) || math.IsInf(s, 0) {
					return nil, stats, &tabular.DataError{File: t.Name, Row: r + 1,
						Err: errors.New("the model's scores for the row are not finite; its inputs are far outside the range of the training data")}
				}
			}
		}
	}
	return p, stats, nil
}

// encodeBlockValues is the most encoded values Predict holds at once.
const encodeBlockValues = 1 << 20

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
