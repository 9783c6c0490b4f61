package pipeline

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"

	"github.com/apache/beam/sdks/v2/go/pkg/beam/testing/ptest"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/fit"
	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

func TestMain(m *testing.M) {
	ptest.MainWithDefault(m, "prism")
}

// testdata is the repository's testdata directory.
var testdata = filepath.Join("..", "..", "..", "testdata")

// localDataset reads a file whole, as deltafit fit does.
func localDataset(t *testing.T, path, target string, c *Config) *tabular.Dataset {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	opts, err := c.readOptions()
	if err != nil {
		t.Fatal(err)
	}
	opts.Target = target
	table, err := ingest.ReadTable(path, f, opts)
	if err != nil {
		t.Fatal(err)
	}
	d, err := tabular.NewDataset(table, target, c.Ignore)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// runConfig returns a configuration for one file with a work directory.
func runConfig(t *testing.T, path, target string) *Config {
	return &Config{Paths: []string{path}, Keys: []string{filepath.Base(path)}, Target: target, Work: t.TempDir()}
}

func run(t *testing.T, c *Config) *State {
	t.Helper()
	s, err := Run(context.Background(), c, "prism")
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// relDiff is |a − b| / max(|a|, |b|, 1e-300).
func relDiff(a, b float64) float64 {
	d := math.Abs(a - b)
	if d == 0 {
		return 0
	}
	return d / math.Max(math.Max(math.Abs(a), math.Abs(b)), 1e-300)
}

// localPlan fits the plan c's encoding options give on every row of d, as
// deltafit fit does in memory.
func localPlan(t *testing.T, c *Config, d *tabular.Dataset) *encode.Plan {
	t.Helper()
	encOpts, _ := c.encodeOptions()
	plan, err := encode.FitPlan(d.Features, nil, encOpts)
	if err != nil {
		t.Fatal(err)
	}
	return plan
}

// localFit trains fit.Train, with the options c gives it, on the rows of
// path encoded by the plan the run s fitted on all of them.
func localFit(t *testing.T, s *State, c *Config, path, target string) *fit.Result {
	t.Helper()
	d := localDataset(t, path, target, c)
	values, _ := s.Plans[0].EncodeTo(nil, d.Features, nil)
	opts, err := c.FitOptions()
	if err != nil {
		t.Fatal(err)
	}
	res, err := fit.Train(fit.Patterns{Width: s.Plans[0].Width(), Values: values}, d.Classes, len(d.Labels), opts)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// worstDiff is the largest relative difference between a weight or bias
// of got and of want.
func worstDiff(got, want *fit.Network) float64 {
	worst := 0.0
	for j, w := range want.Weights {
		for i := range w {
			worst = math.Max(worst, relDiff(got.Weights[j][i], w[i]))
		}
		worst = math.Max(worst, relDiff(got.Biases[j], want.Biases[j]))
	}
	return worst
}

// The batch fit in the pipeline equals fit.Train with Options.Batch on the
// same rows, epoch by epoch: the same plan (exact mode: identical), and
// weights within 1e-9 relative after every epoch (the sums are added in
// another order only across blocks; these files are one block each, so
// the difference is the round-off of λmax's eigendecomposition at most).
func TestBatchEqualsLocal(t *testing.T) {
	for _, tc := range []struct {
		name, file, target string
		epochs             int
	}{
		{"iris", filepath.Join(testdata, "iris.csv"), "species", 50},           // Fisher 1936
		{"crabs", filepath.Join(testdata, "open", "crabs.csv"), "species", 30}, // r-cran-mass
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := runConfig(t, tc.file, tc.target)
			c.Epochs, c.KeepGoing, c.Tolerance, c.Trace = tc.epochs, true, 1e-300, true
			s := run(t, c)

			d := localDataset(t, tc.file, tc.target, c)
			encOpts, err := c.encodeOptions()
			if err != nil {
				t.Fatal(err)
			}
			plan, err := encode.FitPlan(d.Features, nil, encOpts)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(s.Plans[0], plan) {
				t.Fatalf("plan from the pipeline differs from the local plan:\n%+v\n%+v", s.Plans[0], plan)
			}
			if !reflect.DeepEqual(s.Labels, d.Labels) {
				t.Fatalf("labels %v, local %v", s.Labels, d.Labels)
			}
			values, _ := plan.EncodeTo(nil, d.Features, nil)
			patterns := fit.Patterns{Width: plan.Width(), Values: values, Rows: d.Table.Rows}
			m := s.Models[0]
			if len(m.Trace) != tc.epochs || len(m.History) != tc.epochs {
				t.Fatalf("%d epochs traced, %d measured; want %d", len(m.Trace), len(m.History), tc.epochs)
			}
			worst := 0.0
			for e := 1; e <= tc.epochs; e++ {
				opts, err := c.FitOptions()
				if err != nil {
					t.Fatal(err)
				}
				opts.Epochs = e
				res, err := fit.Train(patterns, d.Classes, len(d.Labels), opts)
				if err != nil {
					t.Fatal(err)
				}
				if e == tc.epochs && (relDiff(res.Rate, m.Rate) > 1e-12 || res.Stop != m.Stop) {
					t.Errorf("rate %v stop %q, local %v %q", m.Rate, m.Stop, res.Rate, res.Stop)
				}
				got := m.Trace[e-1]
				for j, w := range res.Network.Weights {
					for i := range w {
						worst = math.Max(worst, relDiff(got.Weights[j][i], w[i]))
					}
					worst = math.Max(worst, relDiff(got.Biases[j], res.Network.Biases[j]))
				}
				local := res.History[e-1]
				if got := m.History[e-1]; got.Errors != local.Errors || relDiff(got.Loss, local.Loss) > 1e-9 {
					t.Errorf("epoch %d: errors %d loss %v, local %d %v", e, got.Errors, got.Loss, local.Errors, local.Loss)
				}
			}
			t.Logf("largest relative difference of a weight over %d epochs: %.3g", tc.epochs, worst)
			if worst > 1e-9 {
				t.Errorf("weights differ from the local batch fit by %.3g relative, want at most 1e-9", worst)
			}
		})
	}
}

// The pipeline's cross-validation equals evaluate.CrossValidate on the
// same folds (pipeline.Folds): identical confusion tables, fold by fold,
// for the batch delta rule, the majority class and the Hebbian baseline.
func TestCVEqualsLocal(t *testing.T) {
	for _, tc := range []struct {
		name, file, target string
		folds              int
	}{
		{"iris", filepath.Join(testdata, "iris.csv"), "species", 10},          // Fisher 1936
		{"birthwt", filepath.Join(testdata, "open", "birthwt.csv"), "low", 5}, // r-cran-mass
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := runConfig(t, tc.file, tc.target)
			c.Epochs, c.Folds, c.Seed = 20, tc.folds, 7
			s := run(t, c)
			if s.Scores == nil {
				t.Fatal("no scores")
			}
			d := localDataset(t, tc.file, tc.target, c)
			rowNumbers := make([]int, d.Table.Rows)
			for i := range rowNumbers {
				rowNumbers[i] = d.Table.RowNumber(i)
			}
			folds := Folds(filepath.Base(tc.file), rowNumbers, d.Classes, len(d.Labels), tc.folds, c.Seed)
			checkStratified(t, folds, d.Classes, len(d.Labels))

			encOpts, err := c.encodeOptions()
			if err != nil {
				t.Fatal(err)
			}
			fitOpts, err := c.FitOptions()
			if err != nil {
				t.Fatal(err)
			}
			l := evaluate.Learner{Plan: encOpts, Fit: fitOpts}
			main, majority, hebbian := s.Scores.CVResults("delta")
			for _, m := range []struct {
				method evaluate.Method
				got    *evaluate.CVResult
			}{
				{evaluate.LearnerMethod("delta", l, d), main},
				{evaluate.MajorityMethod(d), majority},
				{evaluate.LearnerMethod("hebbian", evaluate.HebbianBaseline(l), d), hebbian},
			} {
				local, err := evaluate.CrossValidate(d, folds, m.method)
				if err != nil {
					t.Fatal(err)
				}
				if !reflect.DeepEqual(m.got.Confusion, local.Confusion) || !reflect.DeepEqual(m.got.FoldAccuracy, local.FoldAccuracy) {
					t.Errorf("%s: pooled confusion %v, fold accuracies %v; local %v, %v",
						m.method.Name, m.got.Confusion.Matrix, m.got.FoldAccuracy, local.Confusion.Matrix, local.FoldAccuracy)
				}
				t.Logf("%s: pooled accuracy %.4f", m.method.Name, m.got.Pooled)
			}
		})
	}
}

// checkStratified checks the folds' stratification: every row in one
// fold; per class, fold counts that differ by at most one; fold sizes
// that differ by at most one (as evaluate.StratifiedFolds promises).
func checkStratified(t *testing.T, folds [][]int, classes []int, numClasses int) {
	t.Helper()
	seen := make([]int, len(classes))
	sizes := make([]int, len(folds))
	perClass := make([][]int, numClasses)
	for c := range perClass {
		perClass[c] = make([]int, len(folds))
	}
	for k, fold := range folds {
		sizes[k] = len(fold)
		for _, i := range fold {
			seen[i]++
			perClass[classes[i]][k]++
		}
	}
	for i, n := range seen {
		if n != 1 {
			t.Fatalf("row %d is in %d folds", i, n)
		}
	}
	spread := func(xs []int) int { return slices.Max(xs) - slices.Min(xs) }
	for c, counts := range perClass {
		if spread(counts) > 1 {
			t.Errorf("class %d: fold counts %v differ by more than one", c, counts)
		}
	}
	if spread(sizes) > 1 {
		t.Errorf("fold sizes %v differ by more than one", sizes)
	}
}

// splitFile writes the rows of a CSV file into parts files of consecutive
// rows (each with the header) in a new directory, and returns it.
func splitFile(t *testing.T, path string, parts int) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitAfter(strings.TrimSuffix(string(b), "\n"), "\n")
	header, rows := lines[0], lines[1:]
	dir := t.TempDir()
	per := (len(rows) + parts - 1) / parts
	for k := range parts {
		chunk := rows[min(k*per, len(rows)):min((k+1)*per, len(rows))]
		body := header + strings.Join(chunk, "")
		if !strings.HasSuffix(body, "\n") {
			body += "\n"
		}
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("part-%d.csv", k)), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// Several files and small blocks: the sums are then added block by block,
// and the result still equals the local batch fit on the rows of the
// files one after another (Iris, Fisher 1936, in three files of 50 rows,
// blocks of 16 rows): the plan identically, the weights to 1e-9.
func TestBatchManyBlocks(t *testing.T) {
	dir := splitFile(t, filepath.Join(testdata, "iris.csv"), 3)
	c := &Config{Paths: []string{filepath.Join(dir, "part-0.csv"), filepath.Join(dir, "part-1.csv"), filepath.Join(dir, "part-2.csv")},
		Keys: []string{"part-0.csv", "part-1.csv", "part-2.csv"}, Target: "species", Work: t.TempDir(),
		BlockRows: 16, Epochs: 40, KeepGoing: true, Tolerance: 1e-300, Trace: true}
	s := run(t, c)
	d := localDataset(t, filepath.Join(testdata, "iris.csv"), "species", c)
	plan := localPlan(t, c, d)
	if !reflect.DeepEqual(s.Plans[0], plan) {
		t.Fatalf("plan from 30 blocks differs from the local plan")
	}
	values, _ := plan.EncodeTo(nil, d.Features, nil)
	opts, _ := c.FitOptions()
	res, err := fit.Train(fit.Patterns{Width: plan.Width(), Values: values}, d.Classes, len(d.Labels), opts)
	if err != nil {
		t.Fatal(err)
	}
	worst := 0.0
	for j, w := range res.Network.Weights {
		for i := range w {
			worst = math.Max(worst, relDiff(s.Models[0].Network.Weights[j][i], w[i]))
		}
	}
	t.Logf("largest relative difference of a weight after %d epochs: %.3g", c.Epochs, worst)
	if worst > 1e-9 {
		t.Errorf("weights differ by %.3g relative, want at most 1e-9", worst)
	}
	if len(s.Files) != 3 || s.Files[1].Rows != 50 {
		t.Errorf("files %+v, want 3 of 50 rows", s.Files)
	}
}

// A data error is one line naming the file and the row in the file, even
// when it is found in a later block.
func TestDataErrorNamesRow(t *testing.T) {
	b, err := os.ReadFile(filepath.Join(testdata, "iris.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(string(b), "\n")
	for _, tc := range []struct {
		name, want string
		edit       func(lines []string)
	}{
		{"ragged row", "row 100 (line 101)", func(l []string) { l[100] += ",extra" }},
		{"word in a numeric column", "row 120", func(l []string) { l[120] = "abc" + l[120][strings.Index(l[120], ","):] }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			edited := slices.Clone(lines)
			tc.edit(edited)
			path := filepath.Join(t.TempDir(), "bad.csv")
			if err := os.WriteFile(path, []byte(strings.Join(edited, "\n")), 0o644); err != nil {
				t.Fatal(err)
			}
			c := runConfig(t, path, "species")
			c.BlockRows, c.Epochs = 16, 2
			_, err := Run(context.Background(), c, "prism")
			if err == nil || !strings.HasPrefix(err.Error(), path+": "+tc.want) || strings.Contains(err.Error(), "\n") {
				t.Fatalf("error %v, want one line starting %q", err, path+": "+tc.want)
			}
			t.Log(err)
		})
	}
}

// With the default stop rules the pipeline stops when fit.Train stops, for
// the same reason: the AND truth table (common practice) is separable, so
// the batch fit reaches zero errors.
func TestStopRulesAsLocal(t *testing.T) {
	path := filepath.Join(testdata, "and.csv")
	c := runConfig(t, path, "y")
	c.Numeric = "minmax"
	s := run(t, c)
	d := localDataset(t, path, "y", c)
	plan := localPlan(t, c, d)
	values, _ := plan.EncodeTo(nil, d.Features, nil)
	opts, _ := c.FitOptions()
	res, err := fit.Train(fit.Patterns{Width: plan.Width(), Values: values}, d.Classes, len(d.Labels), opts)
	if err != nil {
		t.Fatal(err)
	}
	m := s.Models[0]
	if m.Stop != res.Stop || len(m.History) != len(res.History) {
		t.Fatalf("stop %q after %d epochs, local %q after %d", m.Stop, len(m.History), res.Stop, len(res.History))
	}
	if m.Stop != fit.StopZeroErrors {
		t.Errorf("stop %q, want %q", m.Stop, fit.StopZeroErrors)
	}
	if s.Passes != len(res.History)+1 {
		t.Errorf("%d training passes, want %d (one per epoch and one that measures the last)", s.Passes, len(res.History)+1)
	}
}

// The averaged mode on one block is online training: each epoch starts
// from the last epoch's weights, visits the rows in fit.Train's order, and
// the average of one block is its weights. So it equals fit.Train online
// (Iris, Fisher 1936), to 1e-9 relative after every epoch.
func TestAveragedOneBlockIsOnline(t *testing.T) {
	path := filepath.Join(testdata, "iris.csv")
	c := runConfig(t, path, "species")
	c.Mode, c.Epochs, c.KeepGoing, c.Tolerance, c.Trace, c.Seed = ModeAveraged, 25, true, 1e-300, true, 3
	s := run(t, c)
	d := localDataset(t, path, "species", c)
	values, _ := s.Plans[0].EncodeTo(nil, d.Features, nil)
	patterns := fit.Patterns{Width: s.Plans[0].Width(), Values: values}
	m := s.Models[0]
	if s.Passes != c.Epochs+2 {
		t.Errorf("%d passes, want %d: the rate, one per epoch, and one that measures the last", s.Passes, c.Epochs+2)
	}
	worst := 0.0
	for e := 1; e <= c.Epochs; e++ {
		opts, _ := c.FitOptions()
		opts.Epochs = e
		res, err := fit.Train(patterns, d.Classes, len(d.Labels), opts)
		if err != nil {
			t.Fatal(err)
		}
		if opts.Batch || relDiff(res.Rate, m.Rate) > 1e-12 {
			t.Fatalf("local options batch %v, rate %v; pipeline rate %v", opts.Batch, res.Rate, m.Rate)
		}
		for j, w := range res.Network.Weights {
			for i := range w {
				worst = math.Max(worst, relDiff(m.Trace[e-1].Weights[j][i], w[i]))
			}
		}
		if got, want := m.History[e-1].Errors, res.History[e-1].Errors; got != want {
			t.Errorf("epoch %d: %d errors, local %d", e, got, want)
		}
	}
	t.Logf("largest relative difference of a weight over %d epochs: %.3g", c.Epochs, worst)
	if worst > 1e-9 {
		t.Errorf("weights differ from online fit.Train by %.3g relative, want at most 1e-9", worst)
	}
}

// Averaged over blocks, the weights are the same on every run (the blocks'
// orders and the averaging order do not depend on the runner), and they
// classify Iris (Fisher 1936) about as well as one online run: at least
// 0.85 of the training rows (common practice for a linear model on Iris).
func TestAveragedBlocks(t *testing.T) {
	path := filepath.Join(testdata, "iris.csv")
	var first *fit.Network
	for range 2 {
		c := runConfig(t, path, "species")
		c.Mode, c.Epochs, c.BlockRows = ModeAveraged, 30, 25
		s := run(t, c)
		m := s.Models[0]
		if first == nil {
			first = m.Network
			last := m.History[len(m.History)-1]
			t.Logf("6 blocks of 25 rows, %d epochs: %d training errors", len(m.History), last.Errors)
			if acc := 1 - float64(last.Errors)/150; acc < 0.85 {
				t.Errorf("training accuracy %.3f, want at least 0.85", acc)
			}
			continue
		}
		if !reflect.DeepEqual(first, m.Network) {
			t.Errorf("a second run gave other weights")
		}
	}
}

// A batch fit with the default stop rules, run past the stop rules'
// patience, ends where fit.Train with the same options ends (Iris, Fisher
// 1936): the same stop, the same number of epochs, the weights within
// 1e-9 relative, and the model's training summary that of the last epoch.
func TestDefaultStopAsLocal(t *testing.T) {
	path := filepath.Join(testdata, "iris.csv")
	c := runConfig(t, path, "species")
	c.Mode, c.Epochs = ModeBatch, 50
	s := run(t, c)
	res := localFit(t, s, c, path, "species")
	got := s.Fitted().Result
	if got.Stop != res.Stop || got.StopRule != res.StopRule || len(got.History) != len(res.History) || got.Epoch != res.Epoch {
		t.Fatalf("stop %q (%s) at epoch %d of %d, local %q (%s) at %d of %d",
			got.Stop, got.StopRule, got.Epoch, len(got.History), res.Stop, res.StopRule, res.Epoch, len(res.History))
	}
	if worst := worstDiff(got.Network, res.Network); worst > 1e-9 {
		t.Errorf("weights differ from the local batch fit by %.3g relative, want at most 1e-9", worst)
	}
	training := s.Model(export.Options{}).Training
	last := res.History[len(res.History)-1]
	if training.Errors != last.Errors || relDiff(training.Loss, last.Loss) > 1e-9 {
		t.Errorf("model file: %d errors, loss %v; the last epoch's are %d, %v", training.Errors, training.Loss, last.Errors, last.Loss)
	}
}

// The plan from quantile sketches: with a capacity above the column's
// length the sketches hold every value and the plan is the exact local one;
// with a small capacity it is the plan encode.PlanFromSummaries fits on the
// sketches of the same blocks merged in the same order (a file's blocks as
// read, then the files by key: sketches merge in an order, not as a sum),
// it reports its rank error, and a warning says so
// (Iris, Fisher 1936, in 3 files of 50 rows, blocks of 16).
func TestSketchedPlan(t *testing.T) {
	dir := splitFile(t, filepath.Join(testdata, "iris.csv"), 3)
	keys := []string{"part-0.csv", "part-1.csv", "part-2.csv"}
	config := func(capacity int) *Config {
		c := &Config{Keys: keys, Target: "species", Work: t.TempDir(), BlockRows: 16, Epochs: 2, SketchCapacity: capacity}
		for _, k := range keys {
			c.Paths = append(c.Paths, filepath.Join(dir, k))
		}
		return c
	}

	c := config(encode.DefaultSketchCapacity)
	s := run(t, c)
	d := localDataset(t, filepath.Join(testdata, "iris.csv"), "species", c)
	exact := localPlan(t, c, d)
	if !reflect.DeepEqual(s.Plans[0], exact) || len(s.Warnings) != 0 {
		t.Errorf("sketches larger than the columns: plan %+v, warnings %q; want the exact plan %+v and no warning", s.Plans[0], s.Warnings, exact)
	}

	const capacity = 8
	c = config(capacity)
	s = run(t, c)
	var merged []*encode.Summary
	for _, k := range keys {
		f, err := os.Open(filepath.Join(dir, k))
		if err != nil {
			t.Fatal(err)
		}
		opts, _ := c.readOptions()
		opts.Target = "species"
		table, err := ingest.ReadTable(k, f, opts)
		f.Close()
		if err != nil {
			t.Fatal(err)
		}
		features := slices.DeleteFunc(slices.Clone(table.Columns), func(col *tabular.Column) bool { return col.Name == "species" })
		var file []*encode.Summary // the file's blocks, merged as read
		for start := 0; start < table.Rows; start += c.BlockRows {
			var rows []int
			for r := start; r < min(start+c.BlockRows, table.Rows); r++ {
				rows = append(rows, r)
			}
			for i, col := range features {
				sum := encode.NewStreamSummary(col.Name, col.Kind, capacity)
				sum.Add(col, rows)
				if len(file) < len(features) {
					file = append(file, sum)
				} else if err := file[i].Merge(sum); err != nil {
					t.Fatal(err)
				}
			}
		}
		if merged == nil {
			merged = file
			continue
		}
		for i, sum := range file {
			if err := merged[i].Merge(sum); err != nil {
				t.Fatal(err)
			}
		}
	}
	encOpts, _ := c.encodeOptions()
	want, err := encode.PlanFromSummaries(merged, encOpts)
	if err != nil {
		t.Fatal(err)
	}
	if want.QuantileRankError <= 0 {
		t.Fatalf("sketches of %d values over 150 rows report no rank error", capacity)
	}
	if !reflect.DeepEqual(s.Plans[0], want) {
		t.Errorf("plan from sketches %+v, want %+v", s.Plans[0], want)
	}
	if len(s.Warnings) != 1 || !strings.Contains(s.Warnings[0], "quantile cuts come from sketches") {
		t.Errorf("warnings %q, want one about the sketched cuts", s.Warnings)
	}
}

// Weight decay and a decaying rate train as in fit.Train (Iris, Fisher
// 1936): in batch mode the weights after the last epoch equal the local
// batch fit's, and in averaged mode on one block the local online fit's
// last iterate, each within 1e-9 relative.
func TestL2AndDecayAsLocal(t *testing.T) {
	path := filepath.Join(testdata, "iris.csv")
	for _, mode := range []string{ModeBatch, ModeAveraged} {
		t.Run(mode, func(t *testing.T) {
			c := runConfig(t, path, "species")
			c.Mode, c.Epochs, c.KeepGoing, c.L2, c.Decay, c.Seed = mode, 15, true, 0.05, 0.2, 3
			s := run(t, c)
			res := localFit(t, s, c, path, "species")
			m := s.Models[0]
			if len(m.History) != len(res.History) || relDiff(m.Rate, res.Rate) > 1e-12 {
				t.Fatalf("%d epochs at rate %v, local %d at %v", len(m.History), m.Rate, len(res.History), res.Rate)
			}
			if worst := worstDiff(m.Network, res.Network); worst > 1e-9 {
				t.Errorf("weights differ from the local fit by %.3g relative, want at most 1e-9", worst)
			}
		})
	}
}
