package export

import (
	"fmt"
	"io"

	"github.com/apache/arrow-go/v18/arrow"

	"deltafit/fit/model"
	"deltafit/ingest/tabular"
)

// WritePredictionsCSV writes a header and one line per row: the 1-based row
// number, the predicted label and one score column per class. opts are as
// NewPredictionWriter takes them.
func WritePredictionsCSV(w io.Writer, p *model.Predictions, opts ...TableOption) error {
	pw, err := NewPredictionWriter(w, TableCSV, "", p.Labels, nil, opts...)
	if err != nil {
		return err
	}
	if err := pw.Write(p, nil); err != nil {
		return err
	}
	return pw.Close()
}

// PredictionWriter writes predictions batch by batch in a TableFormat. The
// columns are the kept input columns, then row (the 1-based row number in
// the input, int64), predicted (the label) and score_LABEL for each class
// (float64; in text, the shortest form that reads back exactly).
type PredictionWriter struct {
	tw     *tableWriter
	file   string
	labels []string
	keep   []arrow.Field
}

// NewPredictionWriter returns a writer of predictions of the given class
// labels with the kept columns keep (fields from KeepField) first. file
// names the input in errors about its cells. In CSV, text cells are
// guarded against formula injection unless opts say CSVTextAsIs(true).
func NewPredictionWriter(w io.Writer, format TableFormat, file string, labels []string, keep []arrow.Field, opts ...TableOption) (*PredictionWriter, error) {
	fields := append([]arrow.Field(nil), keep...)
	fields = append(fields, intColumn{name: "row"}.field(), labelColumn{name: "predicted"}.field())
	for _, l := range labels {
		fields = append(fields, floatColumn{name: "score_" + l}.field())
	}
	tw, err := newTableWriter(w, format, fields, opts)
	if err != nil {
		return nil, err
	}
	return &PredictionWriter{tw: tw, file: file, labels: labels, keep: keep}, nil
}

// Write writes the rows of p, beside the kept columns' arrays of the same
// rows, one per kept field.
func (pw *PredictionWriter) Write(p *model.Predictions, keep []arrow.Array) error {
	if len(p.Labels) != len(pw.labels) {
		return fmt.Errorf("export: predictions of %d classes for a writer of %d", len(p.Labels), len(pw.labels))
	}
	cols, err := keepColumns(pw.keep, keep, nil)
	if err != nil {
		return err
	}
	cols = append(cols, intColumn{name: "row", values: p.RowNumber}, labelColumn{name: "predicted", labels: p.Labels, index: p.Predicted})
	for j, l := range pw.labels {
		cols = append(cols, floatColumn{name: "score_" + l, values: p.Scores, offset: j, stride: len(pw.labels)})
	}
	return pw.tw.write(cols, p.Len(), func(col, row int, err error) error {
		return &tabular.DataError{File: pw.file, Row: p.RowNumber(row), Name: cols[col].field().Name, Err: err}
	})
}

// Close ends the output (a CSV header if no row was written, the end of
// an Arrow stream, a Parquet footer). It does not close the io.Writer.
func (pw *PredictionWriter) Close() error { return pw.tw.close() }

// PatternWriter writes encoded patterns batch by batch in a TableFormat:
// the kept input columns, one float64 column per input unit named after
// the unit, then the target column, if any, as text.
type PatternWriter struct {
	tw     *tableWriter
	file   string
	units  []string
	target string
	keep   []arrow.Field
}

// NewPatternWriter returns a writer of patterns of the named units, with
// the kept columns keep (fields from KeepField) first and the target
// column named target last ("" for none). file names the input in errors
// about its cells. opts are as NewPredictionWriter takes them.
func NewPatternWriter(w io.Writer, format TableFormat, file string, units []string, target string, keep []arrow.Field, opts ...TableOption) (*PatternWriter, error) {
	fields := append([]arrow.Field(nil), keep...)
	for _, u := range units {
		fields = append(fields, floatColumn{name: u}.field())
	}
	if target != "" {
		fields = append(fields, tableColumn{col: &tabular.Column{Name: target}}.field())
	}
	tw, err := newTableWriter(w, format, fields, opts)
	if err != nil {
		return nil, err
	}
	return &PatternWriter{tw: tw, file: file, units: units, target: target, keep: keep}, nil
}

// Write writes n patterns, row after row in patterns (one value per unit),
// beside the rows' target cells (nil without a target column) and the
// kept columns' arrays, one per kept field: their rows in order, or rows
// take[0], take[1], … when take is not nil. rowNumber gives a row's number
// in the input, for errors.
func (pw *PatternWriter) Write(patterns []float64, n int, rowNumber func(int) int, target *tabular.Column, keep []arrow.Array, take []int) error {
	width := len(pw.units)
	if len(patterns) != n*width {
		return fmt.Errorf("export: %d values for %d patterns of %d units", len(patterns), n, width)
	}
	if (target != nil) != (pw.target != "") {
		return fmt.Errorf("export: the target column is given to a writer that has none, or not given to one that has")
	}
	cols, err := keepColumns(pw.keep, keep, take)
	if err != nil {
		return err
	}
	for j, u := range pw.units {
		cols = append(cols, floatColumn{name: u, values: patterns, offset: j, stride: width})
	}
	if target != nil {
		if target.Name != pw.target {
			return fmt.Errorf("export: target column %q given to a writer of %q", target.Name, pw.target)
		}
		cols = append(cols, tableColumn{col: target})
	}
	return pw.tw.write(cols, n, func(col, row int, err error) error {
		return &tabular.DataError{File: pw.file, Row: rowNumber(row), Name: cols[col].field().Name, Err: err}
	})
}

// Close ends the output, as PredictionWriter.Close does.
func (pw *PatternWriter) Close() error { return pw.tw.close() }
