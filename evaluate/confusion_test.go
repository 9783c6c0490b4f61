package evaluate

import (
	"encoding/json"
	"errors"
	"math"
	"reflect"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// exact is the tolerance for values computed by a few float64 operations
// from small integer counts: the error is a few ulps.
const exact = 1e-12

func near(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if math.Abs(got-want) > tol {
		t.Errorf("%s = %.15g, want %.15g (±%g)", name, got, want, tol)
	}
}

// fromMatrix builds a table cell by cell through Add, so the tests exercise
// the counting path rather than assigning Matrix directly.
func fromMatrix(labels []string, matrix [][]int) *Confusion {
	c := NewConfusion(labels)
	for i, row := range matrix {
		for j, count := range row {
			for range count {
				c.Add(i, j)
			}
		}
	}
	return c
}

// animals is the cat/dog/rabbit confusion table of the Wikipedia article
// "Confusion matrix" (from memory): 8 cats, 6 dogs, 13 rabbits.
func animals() *Confusion {
	return fromMatrix([]string{"cat", "dog", "rabbit"}, [][]int{
		{5, 3, 0},
		{2, 3, 1},
		{0, 2, 11},
	})
}

// TestMetricsWorkedByHand checks every metric on the animals table against
// values worked by hand:
//
//	support (row totals)     8, 6, 13   total 27
//	predicted (col totals)   7, 8, 12
//	diagonal                 5 + 3 + 11 = 19
//	accuracy                 19/27
//	precision                5/7, 3/8, 11/12
//	recall                   5/8, 3/6, 11/13
//	F1 = 2·tp/(supp+pred)    10/15, 6/14, 22/25
//	balanced accuracy        (5/8 + 1/2 + 11/13)/3 = (205/104)/3 = 205/312
//	macro F1                 (2/3 + 3/7 + 22/25)/3 = (1037/525)/3 = 1037/1575
//	p_e                      (8·7 + 6·8 + 13·12)/27² = 260/729
//	κ                        (513/729 − 260/729)/(469/729) = 253/469
func TestMetricsWorkedByHand(t *testing.T) {
	c := animals()
	if got := c.Total(); got != 27 { // worked by hand
		t.Errorf("Total = %d, want 27", got)
	}
	if got := c.RowTotals(); !reflect.DeepEqual(got, []int{8, 6, 13}) { // worked by hand
		t.Errorf("RowTotals = %v, want [8 6 13]", got)
	}
	if got := c.ColTotals(); !reflect.DeepEqual(got, []int{7, 8, 12}) { // worked by hand
		t.Errorf("ColTotals = %v, want [7 8 12]", got)
	}

	scalars := []struct {
		name string
		got  float64
		want float64
	}{
		{"accuracy", c.Accuracy(), 19.0 / 27},                    // worked by hand
		{"balanced accuracy", c.BalancedAccuracy(), 205.0 / 312}, // worked by hand
		{"macro F1", c.MacroF1(), 1037.0 / 1575},                 // worked by hand
		{"kappa", c.Kappa(), 253.0 / 469},                        // worked by hand
	}
	for _, s := range scalars {
		t.Run(s.name, func(t *testing.T) { near(t, s.name, s.got, s.want, exact) })
	}

	want := []ClassMetrics{ // worked by hand
		{Label: "cat", Precision: 5.0 / 7, Recall: 5.0 / 8, F1: 10.0 / 15, Support: 8, Predicted: 7},
		{Label: "dog", Precision: 3.0 / 8, Recall: 3.0 / 6, F1: 6.0 / 14, Support: 6, Predicted: 8},
		{Label: "rabbit", Precision: 11.0 / 12, Recall: 11.0 / 13, F1: 22.0 / 25, Support: 13, Predicted: 12},
	}
	for i, got := range c.PerClass() {
		w := want[i]
		t.Run("per class "+w.Label, func(t *testing.T) {
			if got.Label != w.Label || got.Support != w.Support || got.Predicted != w.Predicted {
				t.Errorf("got %s support %d predicted %d, want %s %d %d",
					got.Label, got.Support, got.Predicted, w.Label, w.Support, w.Predicted)
			}
			near(t, "precision", got.Precision, w.Precision, exact)
			near(t, "recall", got.Recall, w.Recall, exact)
			near(t, "F1", got.F1, w.F1, exact)
			// F1 as the harmonic mean of precision and recall (common practice).
			near(t, "F1 vs harmonic mean", got.F1, 2*got.Precision*got.Recall/(got.Precision+got.Recall), exact)
		})
	}
}

// TestKappaPublished checks κ on the two-reader agreement tables of the
// Wikipedia article "Cohen's kappa" (from memory). Rows are reader A
// (yes, no), columns reader B. The article gives 0.4, 0.1304 and 0.26;
// the exact fractions are worked by hand from p_o and p_e.
func TestKappaPublished(t *testing.T) {
	tests := []struct {
		name   string
		matrix [][]int
		want   float64
	}{
		// Wikipedia "Cohen's kappa", from memory: p_o 0.7, p_e 0.5, κ 0.4.
		{"50 grant proposals", [][]int{{20, 5}, {10, 15}}, 0.4},
		// Wikipedia "Cohen's kappa", from memory: p_o 0.6, p_e 0.54, κ 0.06/0.46 ≈ 0.1304.
		{"same agreement, balanced margins", [][]int{{45, 15}, {25, 15}}, 3.0 / 23},
		// Wikipedia "Cohen's kappa", from memory: p_o 0.6, p_e 0.46, κ 0.14/0.54 ≈ 0.26.
		{"same agreement, skewed margins", [][]int{{25, 35}, {5, 35}}, 7.0 / 27},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := fromMatrix([]string{"yes", "no"}, tc.matrix)
			near(t, "kappa", c.Kappa(), tc.want, exact)
		})
	}
}

func TestEdgeCases(t *testing.T) {
	t.Run("empty table", func(t *testing.T) {
		for _, labels := range [][]string{nil, {"a", "b", "c"}} {
			c := NewConfusion(labels)
			// package convention: a zero denominator gives 0 (common practice).
			for name, got := range map[string]float64{
				"accuracy": c.Accuracy(), "balanced accuracy": c.BalancedAccuracy(),
				"macro F1": c.MacroF1(), "kappa": c.Kappa(),
			} {
				if got != 0 {
					t.Errorf("%d labels: %s = %g, want 0", len(labels), name, got)
				}
			}
			if c.Total() != 0 {
				t.Errorf("Total = %d, want 0", c.Total())
			}
			for _, m := range c.PerClass() {
				if m.Precision != 0 || m.Recall != 0 || m.F1 != 0 || m.Support != 0 || m.Predicted != 0 {
					t.Errorf("PerClass of empty table: %+v, want zeros", m)
				}
			}
		}
	})

	t.Run("classes never predicted", func(t *testing.T) {
		// The majority-class baseline on iris: all 150 rows predicted setosa
		// (UCI iris.names: 50 rows per class). Worked by hand: accuracy 1/3;
		// setosa precision 50/150, recall 1, F1 100/200; versicolor and
		// virginica never predicted, so precision 0 (convention), recall 0,
		// F1 0; balanced accuracy (1+0+0)/3; macro F1 (1/2)/3; κ 0 because
		// p_o = p_e = 50·150/150² = 1/3.
		labels, truth := irisClasses(t)
		predicted := make([]int, len(truth))
		c := NewConfusion(labels)
		if err := c.AddAll(truth, predicted); err != nil {
			t.Fatal(err)
		}
		near(t, "accuracy", c.Accuracy(), 1.0/3, exact)                  // worked by hand
		near(t, "balanced accuracy", c.BalancedAccuracy(), 1.0/3, exact) // worked by hand
		near(t, "macro F1", c.MacroF1(), 1.0/6, exact)                   // worked by hand
		near(t, "kappa", c.Kappa(), 0, exact)                            // worked by hand
		per := c.PerClass()
		near(t, "setosa precision", per[0].Precision, 1.0/3, exact) // worked by hand
		near(t, "setosa recall", per[0].Recall, 1, exact)           // worked by hand
		near(t, "setosa F1", per[0].F1, 0.5, exact)                 // worked by hand
		for _, m := range per[1:] {
			if m.Precision != 0 || m.Recall != 0 || m.F1 != 0 || m.Support != 50 || m.Predicted != 0 {
				t.Errorf("%s: %+v, want zero scores, support 50, predicted 0", m.Label, m)
			}
		}
	})

	t.Run("class absent from truth and predictions", func(t *testing.T) {
		// An unused fourth label changes no averaged metric: it is left out
		// of balanced accuracy and macro F1, and adds nothing to p_o or p_e.
		base := animals()
		c := NewConfusion(append(base.Labels, "hamster"))
		for i, row := range base.Matrix {
			copy(c.Matrix[i], row)
		}
		near(t, "balanced accuracy", c.BalancedAccuracy(), base.BalancedAccuracy(), exact)
		near(t, "macro F1", c.MacroF1(), base.MacroF1(), exact)
		near(t, "kappa", c.Kappa(), base.Kappa(), exact)
		if m := c.PerClass()[3]; m.Precision != 0 || m.Recall != 0 || m.F1 != 0 {
			t.Errorf("hamster: %+v, want zero scores", m)
		}
	})

	t.Run("perfect agreement", func(t *testing.T) {
		labels, truth := irisClasses(t)
		c := NewConfusion(labels)
		if err := c.AddAll(truth, truth); err != nil {
			t.Fatal(err)
		}
		// Every row on the diagonal: all metrics 1 (common practice).
		for name, got := range map[string]float64{
			"accuracy": c.Accuracy(), "balanced accuracy": c.BalancedAccuracy(),
			"macro F1": c.MacroF1(), "kappa": c.Kappa(),
		} {
			near(t, name, got, 1, exact)
		}
	})

	t.Run("perfect agreement on one class", func(t *testing.T) {
		// p_e = 1: κ is 1 by the package convention (0/0 otherwise).
		c := fromMatrix([]string{"only", "other"}, [][]int{{4, 0}, {0, 0}})
		near(t, "kappa", c.Kappa(), 1, 0)
		near(t, "accuracy", c.Accuracy(), 1, 0)
	})
}

func TestAdd(t *testing.T) {
	tests := []struct {
		name             string
		truth, predicted int
	}{
		{"truth negative", -1, 0},
		{"truth too large", 3, 0},
		{"predicted too large", 0, 3},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Errorf("Add(%d, %d) did not panic", tc.truth, tc.predicted)
				}
			}()
			NewConfusion([]string{"a", "b", "c"}).Add(tc.truth, tc.predicted)
		})
	}
}

func TestAddAllErrors(t *testing.T) {
	tests := []struct {
		name             string
		truth, predicted []int
		want             error
	}{
		{"length mismatch", []int{0, 1}, []int{0}, ErrLengthMismatch},
		{"truth out of range", []int{0, 3}, []int{0, 1}, ErrClassOutOfRange},
		{"predicted negative", []int{0, 1}, []int{0, -1}, ErrClassOutOfRange},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := NewConfusion([]string{"a", "b", "c"})
			err := c.AddAll(tc.truth, tc.predicted)
			if !errors.Is(err, tc.want) {
				t.Fatalf("AddAll error %v, want %v", err, tc.want)
			}
			if c.Total() != 0 {
				t.Errorf("AddAll counted %d rows before failing, want 0", c.Total())
			}
		})
	}
}

func TestMerge(t *testing.T) {
	labels, truth := irisClasses(t)
	predicted := make([]int, len(truth)) // the majority baseline: all setosa
	whole := NewConfusion(labels)
	if err := whole.AddAll(truth, predicted); err != nil {
		t.Fatal(err)
	}

	t.Run("halves sum to the whole", func(t *testing.T) {
		first, second := NewConfusion(labels), NewConfusion(labels)
		half := len(truth) / 2
		if err := first.AddAll(truth[:half], predicted[:half]); err != nil {
			t.Fatal(err)
		}
		if err := second.AddAll(truth[half:], predicted[half:]); err != nil {
			t.Fatal(err)
		}
		if err := first.Merge(second); err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(first, whole) {
			t.Errorf("merged halves %v, want %v", first.Matrix, whole.Matrix)
		}
	})

	bad := []struct {
		name  string
		other *Confusion
		is    error
	}{
		{"other labels", NewConfusion([]string{"setosa", "versicolor", "virginica", "x"}), ErrLabelsDiffer},
		{"labels reordered", NewConfusion([]string{"versicolor", "setosa", "virginica"}), ErrLabelsDiffer},
		{"ragged matrix", &Confusion{Labels: labels, Matrix: [][]int{{1, 2, 3}, {4}, {5, 6, 7}}}, nil},
	}
	for _, tc := range bad {
		t.Run(tc.name, func(t *testing.T) {
			c := NewConfusion(labels)
			err := c.Merge(tc.other)
			if err == nil {
				t.Fatal("Merge succeeded, want error")
			}
			if tc.is != nil && !errors.Is(err, tc.is) {
				t.Errorf("Merge error %v, want %v", err, tc.is)
			}
			if c.Total() != 0 {
				t.Errorf("failed Merge changed the table: %v", c.Matrix)
			}
		})
	}
}

func TestJSON(t *testing.T) {
	c := animals()
	data, err := json.Marshal(c)
	if err != nil {
		t.Fatal(err)
	}
	var back Confusion
	if err := json.Unmarshal(data, &back); err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(&back, c) {
		t.Errorf("round trip %+v, want %+v", back, c)
	}
	var fields map[string]any
	if err := json.Unmarshal(data, &fields); err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{"labels", "matrix"} {
		if _, ok := fields[key]; !ok {
			t.Errorf("JSON %s has no key %q", data, key)
		}
	}
	data, err = json.Marshal(c.PerClass()[0])
	if err != nil {
		t.Fatal(err)
	}
	fields = nil
	if err := json.Unmarshal(data, &fields); err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{"label", "precision", "recall", "f1", "support", "predicted"} {
		if _, ok := fields[key]; !ok {
			t.Errorf("JSON %s has no key %q", data, key)
		}
	}
}

func TestMeanSD(t *testing.T) {
	columns := irisColumns(t)
	tests := []struct {
		name string
		xs   []float64
	}{
		{"iris sepal_length", columns[0]},
		{"iris petal_width", columns[3]},
		{"iris petal_length setosa", columns[2][:50]},
		{"two values", columns[1][:2]},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			mean, sd := MeanSD(tc.xs)
			wantMean, wantSD := stat.MeanStdDev(tc.xs, nil) // gonum, independent computation
			// Both sum ≤150 values of magnitude ≤8 in a different order: the
			// results agree to a few ulps of the sum.
			near(t, "mean", mean, wantMean, 1e-12)
			near(t, "sd", sd, wantSD, 1e-12)
		})
	}

	t.Run("one value", func(t *testing.T) {
		mean, sd := MeanSD([]float64{0.75})
		if mean != 0.75 || sd != 0 {
			t.Errorf("MeanSD([0.75]) = %g, %g, want 0.75, 0", mean, sd)
		}
	})
	t.Run("empty", func(t *testing.T) {
		if mean, sd := MeanSD(nil); mean != 0 || sd != 0 {
			t.Errorf("MeanSD(nil) = %g, %g, want 0, 0", mean, sd)
		}
	})
}

func TestMajority(t *testing.T) {
	_, iris := irisClasses(t)
	tests := []struct {
		name       string
		classes    []int
		numClasses int
		want       int
	}{
		{"AND outputs 0 0 0 1", []int{0, 0, 0, 1}, 2, 0},       // AND truth table, common practice
		{"OR outputs 0 1 1 1", []int{0, 1, 1, 1}, 2, 1},        // OR truth table, common practice
		{"XOR outputs tie to lowest", []int{0, 1, 1, 0}, 2, 0}, // XOR truth table, common practice
		{"iris three-way tie", iris, 3, 0},                     // UCI iris.names: 50 rows per class
		{"iris virginica only", iris[100:], 3, 2},              // UCI iris.names: rows 101–150 are virginica
		{"empty", nil, 3, 0},
		{"no classes", nil, 0, -1},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := Majority(tc.classes, tc.numClasses); got != tc.want {
				t.Errorf("Majority = %d, want %d", got, tc.want)
			}
		})
	}
}
