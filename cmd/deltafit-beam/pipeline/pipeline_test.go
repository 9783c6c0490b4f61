package pipeline

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"github.com/apache/beam/sdks/v2/go/pkg/beam/testing/ptest"

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
