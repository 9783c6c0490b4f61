package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"
)

var irisPath = filepath.Join("..", "..", "testdata", "iris.csv")

// runOK runs a command line that must succeed and returns its stdout.
func runOK(t *testing.T, args ...string) []byte {
	t.Helper()
	var stdout, stderr bytes.Buffer
	if code := run(context.Background(), args, strings.NewReader(""), &stdout, &stderr); code != 0 {
		t.Fatalf("deltafit %s: exit %d: %s", strings.Join(args, " "), code, stderr.String())
	}
	return stdout.Bytes()
}

// The out-of-fold file holds every row once per repeat, and its true and
// predicted classes tally to the pooled confusion table of the report.
func TestFitOutOfFoldMatchesConfusion(t *testing.T) {
	for _, repeats := range []string{"1", "2"} {
		t.Run("repeats "+repeats, func(t *testing.T) {
			oof := filepath.Join(t.TempDir(), "oof.csv")
			out := runOK(t, "fit", irisPath, "--target", "species", "--folds", "10", "--seed", "1", "--repeats", repeats,
				"--numeric", "thermometer:4", "--epochs", "30", "--oof", oof, "--format", "json")
			var report struct {
				CV struct {
					Confusion struct {
						Labels []string `json:"labels"`
						Matrix [][]int  `json:"matrix"`
					} `json:"confusion"`
				} `json:"cv"`
			}
			if err := json.Unmarshal(out, &report); err != nil {
				t.Fatal(err)
			}
			f, err := os.Open(oof)
			if err != nil {
				t.Fatal(err)
			}
			defer f.Close()
			records, err := csv.NewReader(f).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			header := records[0]
			if want := []string{"row", "repeat", "fold", "class", "predicted", "score_setosa", "score_versicolor", "score_virginica"}; !slices.Equal(header, want) {
				t.Fatalf("header %v, want %v", header, want)
			}
			labels := report.CV.Confusion.Labels
			tally := make([][]int, len(labels))
			for i := range tally {
				tally[i] = make([]int, len(labels))
			}
			seen := map[string]int{}
			for _, rec := range records[1:] {
				seen[rec[0]+"/"+rec[1]]++
				tally[slices.Index(labels, rec[3])][slices.Index(labels, rec[4])]++
			}
			lines := len(records) - 1
			if want := 150 * map[string]int{"1": 1, "2": 2}[repeats]; lines != want || len(seen) != lines {
				t.Errorf("%d lines, %d distinct (row, repeat) pairs; want %d, each once", lines, len(seen), want)
			}
			if !reflect.DeepEqual(tally, report.CV.Confusion.Matrix) {
				t.Errorf("the file tallies to %v, the report's table is %v", tally, report.CV.Confusion.Matrix)
			}
		})
	}
}

// --report writes the report again in the format of its extension, the
// same bytes as stdout in that format; --plot writes the plots.
func TestFitReportFileAndPlots(t *testing.T) {
	dir := t.TempDir()
	args := []string{"fit", irisPath, "--target", "species", "--folds", "5", "--numeric", "thermometer:4", "--epochs", "30"}
	for _, tc := range []struct{ file, format string }{{"r.json", "json"}, {"r.md", "markdown"}, {"r.txt", "text"}} {
		path := filepath.Join(dir, tc.file)
		out := runOK(t, append(args, "--format", tc.format, "--report", path)...)
		saved, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(saved, out) {
			t.Errorf("--report %s differs from --format %s on stdout", tc.file, tc.format)
		}
	}
	plots := filepath.Join(dir, "plots")
	html := filepath.Join(dir, "r.html")
	runOK(t, append(args, "--plot", plots, "--report", html)...)
	for _, name := range []string{"learning-curve", "confusion", "weights"} {
		for _, ext := range []string{".png", ".svg"} {
			if fi, err := os.Stat(filepath.Join(plots, name+ext)); err != nil || fi.Size() == 0 {
				t.Errorf("%s%s: %v", name, ext, err)
			}
		}
	}
	page, err := os.ReadFile(html)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(page, []byte("<h2>Cross-validation</h2>")) || bytes.Contains(page, []byte("<h2>Linear separability</h2>")) {
		t.Error("fit's HTML report should have the cross-validation and no separability (deltafit report adds it)")
	}
}

// twoClassIris writes the versicolor and virginica rows of Iris to a file.
func twoClassIris(t *testing.T) string {
	t.Helper()
	b, err := os.ReadFile(irisPath)
	if err != nil {
		t.Fatal(err)
	}
	var kept []string
	for i, line := range strings.Split(strings.TrimSpace(string(b)), "\n") {
		if i == 0 || !strings.HasSuffix(line, "setosa") {
			kept = append(kept, line)
		}
	}
	path := filepath.Join(t.TempDir(), "two.csv")
	if err := os.WriteFile(path, []byte(strings.Join(kept, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// With two classes the reports give the ROC area of the positive class;
// --positive names it, and is a usage error with more classes or a label
// that is not a class.
func TestPositiveClass(t *testing.T) {
	two := twoClassIris(t)
	model := filepath.Join(t.TempDir(), "m.json")
	plots := filepath.Join(t.TempDir(), "plots")
	runOK(t, "fit", two, "--target", "species", "--numeric", "thermometer:4", "--epochs", "30", "-o", model)
	var report struct {
		Scores struct {
			Positive string   `json:"positive"`
			AUC      *float64 `json:"roc_auc"`
			LogLoss  *float64 `json:"log_loss"`
		} `json:"scores"`
		Settings struct {
			Positive string `json:"positive"`
		} `json:"settings"`
	}
	out := runOK(t, "evaluate", "--model", model, two, "--positive", "versicolor", "--format", "json", "--plot", plots)
	if err := json.Unmarshal(out, &report); err != nil {
		t.Fatal(err)
	}
	if report.Scores.Positive != "versicolor" || report.Scores.AUC == nil || *report.Scores.AUC < 0.9 || report.Scores.LogLoss == nil || report.Settings.Positive != "versicolor" {
		t.Errorf("scores %+v, settings positive %q; want the ROC area of versicolor (above 0.9 on these rows) and a log loss", report.Scores, report.Settings.Positive)
	}
	if _, err := os.Stat(filepath.Join(plots, "roc.svg")); err != nil {
		t.Errorf("no ROC plot: %v", err)
	}
	for _, tc := range []struct {
		name string
		args []string
	}{
		{"not a class", []string{"evaluate", "--model", model, two, "--positive", "setosa"}},
		{"three classes", []string{"fit", irisPath, "--target", "species", "--positive", "setosa"}},
		{"oof without folds", []string{"fit", irisPath, "--target", "species", "--oof", "x.csv"}},
		{"oof not csv", []string{"fit", irisPath, "--target", "species", "--folds", "3", "--oof", "x.xlsx"}},
		{"report of no known format", []string{"fit", irisPath, "--target", "species", "--report", "r.pdf"}},
		{"report command without -o", []string{"report", irisPath, "--target", "species"}},
		{"report command to a text file", []string{"report", irisPath, "--target", "species", "-o", "r.txt"}},
		{"trace of no steps", []string{"trace", irisPath, "--target", "species", "--steps", "0"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			if code := run(context.Background(), tc.args, strings.NewReader(""), &stdout, &stderr); code != exitUsage {
				t.Errorf("exit %d, want %d (usage); stderr %s", code, exitUsage, stderr.String())
			}
		})
	}
}

// On XOR every traced change has the sign of (t − y)·x: the delta rule
// moves each weight toward the target in proportion to the sending
// activity (Widrow & Hoff 1960).
func TestTraceXORSigns(t *testing.T) {
	xor := filepath.Join("..", "..", "testdata", "xor.csv")
	out := runOK(t, "trace", xor, "--target", "y", "--steps", "16", "--top", "0", "--format", "json")
	var trace struct {
		Updates []struct {
			Row     int       `json:"row"`
			Errors  []float64 `json:"errors"`
			Changes []struct {
				Input    string  `json:"input"`
				Activity float64 `json:"activity"`
				Delta    float64 `json:"delta"`
			} `json:"changes"`
		} `json:"updates"`
	}
	if err := json.Unmarshal(out, &trace); err != nil {
		t.Fatal(err)
	}
	if len(trace.Updates) != 16 {
		t.Fatalf("%d updates, want 16", len(trace.Updates))
	}
	moved := 0
	for k, u := range trace.Updates {
		for _, c := range u.Changes {
			want := u.Errors[0] * c.Activity
			if (c.Delta > 0) != (want > 0) || (c.Delta < 0) != (want < 0) {
				t.Errorf("update %d (row %d), %s: Δw %v, (t − y)·x %v: signs differ", k+1, u.Row, c.Input, c.Delta, want)
			}
			if c.Delta != 0 {
				moved++
			}
		}
	}
	if moved == 0 {
		t.Error("no weight moved")
	}
}
