package export

import (
	"io"

	"github.com/apache/arrow-go/v18/arrow"

	"deltafit/evaluate"
	"deltafit/ingest/tabular"
)

// WriteOutOfFold writes the out-of-fold predictions of a cross-validation
// of d in a TableFormat, one row per row of d per repeat, fold after fold:
// row (the row's 1-based number in the input), repeat and fold (that held
// it out, from 1), class (its true class), predicted and score_LABEL for
// each class, the scores as predict writes them. file names the data in
// errors. opts are as NewPredictionWriter takes them.
func WriteOutOfFold(w io.Writer, format TableFormat, file string, d *tabular.Dataset, oof []evaluate.FoldPredictions, opts ...TableOption) error {
	fields := append([]column(nil),
		intColumn{name: "row"}, intColumn{name: "repeat"}, intColumn{name: "fold"},
		labelColumn{name: "class"}, labelColumn{name: "predicted"})
	for _, l := range d.Labels {
		fields = append(fields, floatColumn{name: "score_" + l})
	}
	schema := make([]arrow.Field, len(fields))
	for i, c := range fields {
		schema[i] = c.field()
	}
	tw, err := newTableWriter(w, format, schema, opts)
	if err != nil {
		return err
	}
	for _, f := range oof {
		truth := make([]int, len(f.Rows))
		for n, row := range f.Rows {
			truth[n] = d.Classes[row]
		}
		repeat, fold := f.Repeat+1, f.Fold+1
		cols := []column{
			intColumn{name: "row", values: func(n int) int { return d.Table.RowNumber(f.Rows[n]) }},
			intColumn{name: "repeat", values: func(int) int { return repeat }},
			intColumn{name: "fold", values: func(int) int { return fold }},
			labelColumn{name: "class", labels: d.Labels, index: truth},
			labelColumn{name: "predicted", labels: d.Labels, index: f.Predicted},
		}
		for j, l := range d.Labels {
			cols = append(cols, floatColumn{name: "score_" + l, values: f.Scores, offset: j, stride: len(d.Labels)})
		}
		if err := tw.write(cols, f.Len(), func(col, n int, err error) error {
			return &tabular.DataError{File: file, Row: d.Table.RowNumber(f.Rows[n]), Name: cols[col].field().Name, Err: err}
		}); err != nil {
			return err
		}
	}
	return tw.close()
}
