package evaluate

import (
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"deltafit/internal/fixture"
)

// referenceAccuracy reads the pooled 10-fold accuracy of base R's linear
// model for a dataset from testdata/open/reference.csv, written by
// testdata/open/reference.R (glm binomial for two classes, lm one-vs-rest
// otherwise, standardized columns; see testdata/open/PROVENANCE.md): the
// mean over its seeds 1–10, since R deals other folds than deltafit.
func referenceAccuracy(t *testing.T, dataset string) float64 {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "testdata", "open", "reference.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	records, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	sum, n := 0.0, 0
	for _, r := range records[1:] {
		if r[0] == dataset {
			x, err := strconv.ParseFloat(r[2], 64)
			if err != nil {
				t.Fatal(err)
			}
			sum, n = sum+x, n+1
		}
	}
	if n != 10 {
		t.Fatalf("reference.csv has %d rows for %s, want 10 seeds", n, dataset)
	}
	return sum / float64(n)
}

// The default fit is never a weaker baseline than base R's linear model:
// its pooled stratified 10-fold accuracy (seed 1) is at least the
// reference's mean less 0.005 on every open dataset.
func TestDefaultAgainstBaseR(t *testing.T) {
	for _, tc := range []struct{ dataset, file, target string }{
		{"iris", "../iris.csv", "species"},
		{"crabs", "crabs.csv", "species"},
		{"birthwt", "birthwt.csv", "low"},
		{"spam", "spam.csv", "type"},
		{"mlc_churn", "mlc_churn.csv", "churn"},
	} {
		t.Run(tc.dataset, func(t *testing.T) {
			if testing.Short() && (tc.dataset == "spam" || tc.dataset == "mlc_churn") {
				t.Skip("a few seconds each; skipped with -short")
			}
			d := fixture.TestdataDataset(t, "open/"+tc.file, tc.target)
			s, err := RunStudy(context.Background(), d, DefaultLearner(1), StudyOptions{Folds: 10, Seed: 1})
			if err != nil {
				t.Fatal(err)
			}
			want := referenceAccuracy(t, tc.dataset)
			t.Logf("%s: deltafit %.4f, base R %.4f", tc.dataset, s.Main.Pooled, want)
			if s.Main.Pooled < want-0.005 {
				t.Errorf("%s: pooled accuracy %.4f, below base R's %.4f − 0.005", tc.dataset, s.Main.Pooled, want)
			}
		})
	}
}
