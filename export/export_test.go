package export

import (
	"bytes"
	"flag"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/ingest"
	"deltafit/ingest/tabular"
	"deltafit/internal/refdata"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

func irisDataset(t *testing.T) *tabular.Dataset {
	t.Helper()
	d, err := refdata.Iris()
	if err != nil {
		t.Fatal(err)
	}
	return d
}

func irisModel(t *testing.T) (*Model, *tabular.Dataset) {
	t.Helper()
	d := irisDataset(t)
	fitted, err := evaluate.Learner{Fit: fit.Options{Seed: 1}}.Train(d, nil)
	if err != nil {
		t.Fatal(err)
	}
	opts := Options{Rule: "delta", Unit: "logistic", Epochs: 200, Rate: "auto", Numeric: "thermometer:8", Categorical: "onehot:1", Seed: 1, Ignore: []string{}, Kinds: map[string]string{}}
	return NewModel(fitted, opts, DataInfo{Rows: d.Table.Rows, SHA256: "test"}), d
}

// Round trip: write → read → equal, and writing again gives the same bytes.
func TestModelRoundTrip(t *testing.T) {
	m, _ := irisModel(t)
	var first bytes.Buffer
	if err := WriteModel(&first, m); err != nil {
		t.Fatal(err)
	}
	back, err := ReadModel("model.json", bytes.NewReader(first.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(m, back) {
		t.Fatal("the model read back differs from the one written")
	}
	var second bytes.Buffer
	if err := WriteModel(&second, back); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(first.Bytes(), second.Bytes()) {
		t.Fatal("rewriting a model read back changed its bytes")
	}
}

func TestReadModelRejects(t *testing.T) {
	m, _ := irisModel(t)
	var good bytes.Buffer
	if err := WriteModel(&good, m); err != nil {
		t.Fatal(err)
	}
	edit := func(old, new string) string { return strings.Replace(good.String(), old, new, 1) }
	for _, tc := range []struct {
		name, data, want string
	}{
		{"empty", "", "empty"},
		{"not json", "rows,of,csv\n1,2,3\n", "invalid JSON"},
		{"truncated", good.String()[:good.Len()/2], "truncated"},
		{"no schema", `{"tool": "x"}`, "no schema_version"},
		{"future schema", edit(`"schema_version": 1`, `"schema_version": 99`), "schema version 99"},
		{"unknown field", edit(`"tool":`, `"surprise": 1, "tool":`), "unknown field"},
		{"labels mismatch", edit(`"setosa",`, ``), "labels"},
		{"no plan", edit(`"plan": {`, `"plan_": {`), "unknown field"},
		{"inputs mismatch", edit(`"inputs": 28`, `"inputs": 27`), "inputs"},
		{"absurd inputs", edit(`"inputs": 28`, `"inputs": 1000000000000`), "inputs"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadModel("m.json", strings.NewReader(tc.data))
			if err == nil {
				t.Fatal("accepted")
			}
			if !strings.HasPrefix(err.Error(), "m.json: ") || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %q, want it to start with the file name and mention %q", err, tc.want)
			}
		})
	}
}

// Predictions written as CSV read back through ingest with the same labels
// and exactly the same scores (written in their shortest exact form).
func TestPredictionsRoundTrip(t *testing.T) {
	m, d := irisModel(t)
	p, stats, err := m.PredictTable(d.Table)
	if err != nil {
		t.Fatal(err)
	}
	if len(stats.Other) != 0 || len(stats.MissingNoUnit) != 0 {
		t.Fatalf("training rows met unknown values: %+v", stats)
	}
	var buf bytes.Buffer
	if err := WritePredictionsCSV(&buf, p); err != nil {
		t.Fatal(err)
	}
	back, err := ingest.ReadTable("predictions.csv", &buf, ingest.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if back.Rows != d.Table.Rows {
		t.Fatalf("%d rows read back, want %d", back.Rows, d.Table.Rows)
	}
	for i := 0; i < back.Rows; i++ {
		if got := back.Column("row").Numbers[i]; got != float64(i+1) {
			t.Fatalf("row %d numbered %v", i+1, got)
		}
		if got := back.Column("predicted").Text[i]; got != d.Labels[p.Predicted[i]] {
			t.Fatalf("row %d: predicted %q, want %q", i+1, got, d.Labels[p.Predicted[i]])
		}
		for j, l := range d.Labels {
			got := back.Column("score_" + l).Numbers[i]
			if want := p.ScoresOf(i)[j]; got != want {
				t.Fatalf("row %d score %s: %v, want %v", i+1, l, got, want)
			}
		}
	}
}

// The reports of fit in every format match the golden files (regenerate
// with go test ./export -update after an intended change).
func TestFitReportGolden(t *testing.T) {
	m, d := irisModel(t)
	folds, err := evaluate.Folds(d, 5, 1, 0)
	if err != nil {
		t.Fatal(err)
	}
	learner := evaluate.Learner{Fit: fit.Options{Seed: 1}}
	main, err := evaluate.CrossValidate(d, folds, evaluate.LearnerMethod("delta", learner, d))
	if err != nil {
		t.Fatal(err)
	}
	majority, err := evaluate.CrossValidate(d, folds, evaluate.MajorityMethod(d))
	if err != nil {
		t.Fatal(err)
	}
	hebb := learner
	hebb.Fit.Rule, hebb.Fit.Epochs = fit.Hebbian{}, 1
	hebbian, err := evaluate.CrossValidate(d, folds, evaluate.LearnerMethod("hebbian", hebb, d))
	if err != nil {
		t.Fatal(err)
	}
	settings := NewSettings("iris.csv", "test", 150, "species", m.Plan, m.Options, m.Training, fit.Options{Seed: 1})
	settings.Folds = 5
	report := &FitReport{
		Data:     DataSummary{Source: "iris.csv", SHA256: "test", Rows: 150, Features: 4, Inputs: m.Plan.Width(), Target: "species", Labels: d.Labels, ClassCounts: []int{50, 50, 50}},
		Plan:     NewPlanSummary(m.Plan, nil),
		Training: NewTrainingSummary(m),
		CV:       NewCVReport(1, main, majority, hebbian),
		Model:    "iris.model.json",
		History:  m.Training.History,
		Settings: &settings,
	}
	scored, err := main.Scored(d)
	if err != nil {
		t.Fatal(err)
	}
	if report.CV.Scores, err = ScoreFiguresOf(scored, d.Labels, fit.Logistic, -1); err != nil {
		t.Fatal(err)
	}
	for _, format := range []Format{Text, Markdown, JSON} {
		t.Run(string(format), func(t *testing.T) {
			var buf bytes.Buffer
			if err := WriteFitReport(&buf, format, report); err != nil {
				t.Fatal(err)
			}
			golden(t, "fit_report."+string(format), buf.Bytes())
		})
	}
}

func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name+".golden")
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from the golden file; got:\n%s", path, got)
	}
}

// The reports of evaluate in every format match the golden files: a
// two-class problem (versicolor against virginica), with the ROC area.
func TestEvaluationReportGolden(t *testing.T) {
	d := irisDataset(t)
	table, _ := d.Table.DropRows(func(row int) bool { return d.Labels[d.Classes[row]] != "setosa" })
	two, err := tabular.NewDataset(table, "species", nil)
	if err != nil {
		t.Fatal(err)
	}
	fitted, err := evaluate.Learner{Fit: fit.Options{Seed: 1, Epochs: 50}}.Train(two, nil)
	if err != nil {
		t.Fatal(err)
	}
	opts := Options{Rule: "delta", Unit: "logistic", Epochs: 50, Rate: "auto", Numeric: "thermometer:8", Categorical: "onehot:1", Seed: 1, Ignore: []string{}, Kinds: map[string]string{}}
	m := NewModel(fitted, opts, DataInfo{Rows: two.Table.Rows, SHA256: "train"})
	p, _, err := m.PredictTable(two.Table)
	if err != nil {
		t.Fatal(err)
	}
	confusion := evaluate.NewConfusion(m.Labels)
	if err := confusion.AddAll(two.Classes, p.Predicted); err != nil {
		t.Fatal(err)
	}
	report := NewEvaluationReport(NewScoredDataSummary("iris.csv", "test", &m.Classifier, confusion), "model.json", confusion)
	scored, err := evaluate.ScoredOf(p, two.Classes)
	if err != nil {
		t.Fatal(err)
	}
	positive, err := PositiveClass(m.Labels, "virginica")
	if err != nil {
		t.Fatal(err)
	}
	if report.Scores, err = ScoreFiguresOf(scored, m.Labels, m.Network.Unit, positive); err != nil {
		t.Fatal(err)
	}
	settings := ModelSettings(m, "model.json", "iris.csv", "test", confusion.Total())
	settings.Positive = "virginica"
	report.Settings = &settings
	for _, format := range []Format{Text, Markdown, JSON} {
		t.Run(string(format), func(t *testing.T) {
			var buf bytes.Buffer
			if err := WriteEvaluationReport(&buf, format, report); err != nil {
				t.Fatal(err)
			}
			golden(t, "evaluation_report."+string(format), buf.Bytes())
		})
	}
}
