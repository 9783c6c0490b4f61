package evaluate

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// TestAveragesWorkedByHand checks the micro, macro and weighted averages
// on the animals table (see TestMetricsWorkedByHand for its totals):
//
//	micro                    19/27 for precision, recall and F1
//	macro precision          (5/7 + 3/8 + 11/12)/3 = (337/168)/3 = 337/504
//	macro recall             (5/8 + 3/6 + 11/13)/3 = 205/312
//	macro F1                 1037/1575
//	weighted precision       (8·5/7 + 6·3/8 + 13·11/12)/27 = (835/42)/27 = 835/1134
//	weighted recall          (5 + 3 + 11)/27 = 19/27
//	weighted F1              (8·2/3 + 6·3/7 + 13·22/25)/27 = (10156/525)/27 = 10156/14175
func TestAveragesWorkedByHand(t *testing.T) {
	c := animals()
	for _, tc := range []struct {
		name string
		got  Averaged
		want Averaged
	}{
		{"micro", c.Micro(), Averaged{Recall: 19.0 / 27, Precision: 19.0 / 27, F1: 19.0 / 27}},                // worked by hand
		{"macro", c.Macro(), Averaged{Recall: 205.0 / 312, Precision: 337.0 / 504, F1: 1037.0 / 1575}},        // worked by hand
		{"weighted", c.Weighted(), Averaged{Recall: 19.0 / 27, Precision: 835.0 / 1134, F1: 10156.0 / 14175}}, // worked by hand
	} {
		t.Run(tc.name, func(t *testing.T) {
			near(t, "recall", tc.got.Recall, tc.want.Recall, exact)
			near(t, "precision", tc.got.Precision, tc.want.Precision, exact)
			near(t, "F1", tc.got.F1, tc.want.F1, exact)
		})
	}
	near(t, "macro F1 against MacroF1", c.Macro().F1, c.MacroF1(), exact)
}

// A class that is predicted but has no rows counts in the macro mean with
// recall 0, and not in the weighted mean (its weight, its rows, is 0).
func TestAveragesAbsentClass(t *testing.T) {
	c := fromMatrix([]string{"a", "b", "c"}, [][]int{
		{3, 1, 0},
		{0, 2, 1},
		{0, 0, 0},
	})
	// worked by hand: recall a 3/4, b 2/3, c 0; precision a 1, b 2/3, c 0.
	near(t, "macro recall", c.Macro().Recall, (3.0/4+2.0/3+0)/3, exact)
	near(t, "macro precision", c.Macro().Precision, (1+2.0/3+0)/3, exact)
	near(t, "weighted recall", c.Weighted().Recall, 5.0/7, exact)
	near(t, "weighted precision", c.Weighted().Precision, (4*1+3*2.0/3)/7, exact)

	empty := NewConfusion([]string{"a", "b"})
	if got := empty.Micro(); got != (Averaged{}) {
		t.Errorf("micro of an empty table = %+v, want zeros", got)
	}
	if got := empty.Weighted(); got != (Averaged{}) {
		t.Errorf("weighted of an empty table = %+v, want zeros", got)
	}
}

// TestMatthewsWorkedByHand: on the animals table c = 19, s = 27,
// Σ p_k t_k = 7·8 + 8·6 + 12·13 = 260, Σ p_k² = 257, Σ t_k² = 269, so
// MCC = (19·27 − 260)/√((729 − 257)(729 − 269)) = 253/√217120.
func TestMatthewsWorkedByHand(t *testing.T) {
	near(t, "MCC", animals().Matthews(), 253/math.Sqrt(217120), exact) // worked by hand

	// Two classes: tp 6, fn 2, fp 1, tn 11 (rows: true class 1 first
	// here as class index 1). Matthews 1975: (tp·tn − fp·fn)/√((tp+fp)(tp+fn)(tn+fp)(tn+fn))
	// = (66 − 2)/√(7·8·12·13) = 64/√8736.
	two := fromMatrix([]string{"no", "yes"}, [][]int{
		{11, 1},
		{2, 6},
	})
	near(t, "MCC of a 2×2 table", two.Matthews(), 64/math.Sqrt(8736), exact) // worked by hand

	for _, tc := range []struct {
		name   string
		matrix [][]int
		want   float64
	}{
		{"perfect", [][]int{{4, 0}, {0, 6}}, 1},                    // worked by hand
		{"inverted", [][]int{{0, 4}, {6, 0}}, -1},                  // worked by hand
		{"all predicted as one class", [][]int{{4, 0}, {6, 0}}, 0}, // zero denominator: the package convention
		{"empty", [][]int{{0, 0}, {0, 0}}, 0},                      // zero denominator: the package convention
	} {
		t.Run(tc.name, func(t *testing.T) {
			near(t, "MCC", fromMatrix([]string{"a", "b"}, tc.matrix).Matthews(), tc.want, exact)
		})
	}
}

// The multi-class MCC is the correlation of the one-hot coded truth X and
// predictions Y, cov(X, Y)/√(cov(X, X)·cov(Y, Y)) with cov summed over the
// classes (Gorodkin 2004); computed here independently with gonum's
// covariances of the indicator columns. With two classes it is the Pearson
// correlation of the 0/1 truth and prediction (Matthews 1975).
func TestMatthewsAgainstCovariances(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 0))
	for trial := range 20 {
		k := 2 + trial%4
		n := 30 + rng.IntN(50)
		labels := make([]string, k)
		for i := range labels {
			labels[i] = string(rune('a' + i))
		}
		truth, predicted := make([]int, n), make([]int, n)
		for i := range truth {
			truth[i] = rng.IntN(k)
			predicted[i] = truth[i]
			if rng.Float64() < 0.4 {
				predicted[i] = rng.IntN(k)
			}
		}
		c := NewConfusion(labels)
		if err := c.AddAll(truth, predicted); err != nil {
			t.Fatal(err)
		}
		var xy, xx, yy float64
		x, y := make([]float64, n), make([]float64, n)
		for class := range k {
			for i := range n {
				x[i], y[i] = indicator(truth[i] == class), indicator(predicted[i] == class)
			}
			xy += stat.Covariance(x, y, nil)
			xx += stat.Covariance(x, x, nil)
			yy += stat.Covariance(y, y, nil)
		}
		want := xy / math.Sqrt(xx*yy)
		near(t, "MCC", c.Matthews(), want, 1e-12) // sums of a few hundred terms: round-off well under 1e-12
		if k == 2 {
			tf, pf := make([]float64, n), make([]float64, n)
			for i := range n {
				tf[i], pf[i] = float64(truth[i]), float64(predicted[i])
			}
			near(t, "MCC against the Pearson correlation", c.Matthews(), stat.Correlation(tf, pf, nil), 1e-12)
		}
	}
}

func indicator(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// TestWilsonPublished checks the 95% intervals of Newcombe (1998), Table I,
// method 3 (Wilson score without continuity correction), to the four
// decimals printed there (from memory).
func TestWilsonPublished(t *testing.T) {
	for _, tc := range []struct {
		r, n      int
		low, high float64
	}{
		{81, 263, 0.2553, 0.3662}, // Newcombe 1998, Table I, example (a) (from memory)
		{15, 148, 0.0624, 0.1605}, // Newcombe 1998, Table I, example (b) (from memory)
		{0, 20, 0.0000, 0.1611},   // Newcombe 1998, Table I, example (c) (from memory)
		{1, 29, 0.0061, 0.1718},   // Newcombe 1998, Table I, example (d) (from memory)
	} {
		got := Wilson(tc.r, tc.n, Z95)
		near(t, "low", got.Low, tc.low, 5e-5) // four decimals printed
		near(t, "high", got.High, tc.high, 5e-5)
	}
}

// The Wilson interval is the set of p₀ with |p̂ − p₀| ≤ z·√(p₀(1−p₀)/n)
// (Wilson 1927); its ends, found here independently by bisection on that
// inequality, must match the closed form.
func TestWilsonByBisection(t *testing.T) {
	for _, tc := range []struct{ r, n int }{{0, 5}, {3, 5}, {5, 5}, {19, 27}, {143, 150}, {1, 1000}} {
		phat := float64(tc.r) / float64(tc.n)
		inside := func(p0 float64) bool {
			return math.Abs(phat-p0) <= Z95*math.Sqrt(p0*(1-p0)/float64(tc.n))
		}
		// The end between an outside point a and an inside point b.
		edge := func(a, b float64) float64 {
			for range 200 {
				m := (a + b) / 2
				if inside(m) {
					b = m
				} else {
					a = m
				}
			}
			return b
		}
		low, high := 0.0, 1.0
		if !inside(0) {
			low = edge(0, phat)
		}
		if !inside(1) {
			high = edge(1, phat)
		}
		got := Wilson(tc.r, tc.n, Z95)
		near(t, "low", got.Low, low, 1e-12) // bisection to the last bits; the closed form rounds a few ulps
		near(t, "high", got.High, high, 1e-12)
	}
	if got := Wilson(0, 0, Z95); got != (Interval{0, 1}) {
		t.Errorf("Wilson of no trials = %+v, want [0, 1]", got)
	}
	c := animals()
	if got, want := c.AccuracyInterval(), Wilson(19, 27, Z95); got != want {
		t.Errorf("AccuracyInterval = %+v, want Wilson(19, 27) = %+v", got, want)
	}
}
