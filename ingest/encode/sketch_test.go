package encode_test

import (
	"encoding/json"
	"testing"

	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
	"deltafit/internal/fixture"
)

// streamPlan fits a plan from stream summaries of capacity per level,
// the rows added in batches of batch rows.
func streamPlan(t *testing.T, cols []*tabular.Column, batch, capacity int, opts encode.Options) *encode.Plan {
	t.Helper()
	summaries := make([]*encode.Summary, len(cols))
	for i, col := range cols {
		summaries[i] = encode.NewStreamSummary(col.Name, col.Kind, capacity)
		for from := 0; from < col.Len(); from += batch {
			summaries[i].Add(col.Slice(from, min(from+batch, col.Len())), nil)
		}
	}
	p, err := encode.PlanFromSummaries(summaries, opts)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// While a column's values fit the sketch, the plan fitted from stream
// summaries is the in-memory plan to the byte, for every encoding, and
// says nothing of a rank error.
func TestStreamPlanExactWhileValuesFit(t *testing.T) {
	iris := fixture.ReadCSVText(t, "iris.csv", fixture.IrisWithGaps(), ingest.ReadOptions{})
	for name, opts := range allPlanOptions(t) {
		t.Run(name, func(t *testing.T) {
			want, err := json.Marshal(fitPlan(t, iris.Columns, nil, opts))
			if err != nil {
				t.Fatal(err)
			}
			for _, batch := range []int{1, 7, 150} {
				got, err := json.Marshal(streamPlan(t, iris.Columns, batch, 150, opts))
				if err != nil {
					t.Fatal(err)
				}
				if string(got) != string(want) {
					t.Fatalf("batches of %d: stream plan\n%s\nwant\n%s", batch, got, want)
				}
			}
		})
	}
}

// Past its capacity the sketch's cuts are approximate and the plan says
// by how much at most.
func TestStreamPlanReportsRankError(t *testing.T) {
	iris := fixture.ReadIris(t)
	opts := encode.Options{Numeric: mustNumeric(t, "thermometer:4")}
	p := streamPlan(t, iris.Columns, 10, 16, opts)
	if !(p.QuantileRankError > 0 && p.QuantileRankError < 1) {
		t.Fatalf("quantile_rank_error = %v, want a fraction above 0", p.QuantileRankError)
	}
	exact := fitPlan(t, iris.Columns, nil, opts)
	if exact.QuantileRankError != 0 {
		t.Errorf("in-memory plan reports a rank error %v", exact.QuantileRankError)
	}
}
