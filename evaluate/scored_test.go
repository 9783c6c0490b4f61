package evaluate

import (
	"errors"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"deltafit/fit"
)

// twoClass builds the scores (1−y, y) of a one-unit network for outputs y.
func twoClass(truth []int, y []float64) Scored {
	s := Scored{Classes: 2, Truth: truth}
	for _, v := range y {
		s.Scores = append(s.Scores, 1-v, v)
	}
	return s
}

// TestAUCWorkedByHand: positives score 0.8, 0.7, 0.6 and negatives 0.7,
// 0.1. Of the 6 pairs, (0.8, 0.7), (0.8, 0.1), (0.7, 0.1), (0.6, 0.1) are
// ordered, (0.7, 0.7) is a tie worth 1/2 and (0.6, 0.7) is not: AUC =
// 4.5/6 = 0.75.
func TestAUCWorkedByHand(t *testing.T) {
	s := twoClass([]int{1, 0, 1, 1, 0}, []float64{0.8, 0.7, 0.7, 0.6, 0.1})
	auc, err := s.AUC(1)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "AUC", auc, 0.75, exact) // worked by hand
	// Class 0's score is 1 − y: the order reverses, and so does the area.
	auc0, err := s.AUC(0)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "AUC of class 0", auc0, 0.75, exact) // worked by hand: the same pairs, seen from the other side
}

// TestAUCPublished checks the example of Hanley & McNeil (1982), Table 1:
// 109 CT images rated on a five-point scale, 58 normal and 51 abnormal,
// whose area is 0.893 (from memory).
func TestAUCPublished(t *testing.T) {
	normal := []int{33, 6, 6, 11, 2}   // ratings 1 (definitely normal) to 5 (definitely abnormal)
	abnormal := []int{3, 2, 2, 11, 33} // Hanley & McNeil 1982, Table 1 (from memory)
	var s Scored
	s.Classes = 2
	for rating := range 5 {
		for range normal[rating] {
			s.Truth = append(s.Truth, 0)
			s.Scores = append(s.Scores, 0, float64(rating+1))
		}
		for range abnormal[rating] {
			s.Truth = append(s.Truth, 1)
			s.Scores = append(s.Scores, 0, float64(rating+1))
		}
	}
	auc, err := s.AUC(1)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "AUC", auc, 0.893, 5e-4) // three decimals printed
}

// The Mann-Whitney AUC equals the share of (positive, negative) pairs in
// order, ties counting half, counted here pair by pair; and the trapezoid
// area under ROC's points equals it too (common practice: the two are one
// statistic, Hanley & McNeil 1982).
func TestAUCAgainstPairsAndROC(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 0))
	for trial := range 30 {
		n := 5 + rng.IntN(60)
		s := Scored{Classes: 3}
		for range n {
			s.Truth = append(s.Truth, rng.IntN(3))
			for range 3 {
				s.Scores = append(s.Scores, float64(rng.IntN(6))/5) // coarse: many ties
			}
		}
		positive := trial % 3
		auc, err := s.AUC(positive)
		if errors.Is(err, ErrOneClass) {
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		var ordered, pairs float64
		for i := range n {
			for j := range n {
				if s.Truth[i] != positive || s.Truth[j] == positive {
					continue
				}
				a, b := s.Scores[i*3+positive], s.Scores[j*3+positive]
				pairs++
				switch {
				case a > b:
					ordered++
				case a == b:
					ordered += 0.5
				}
			}
		}
		near(t, "AUC against pairs", auc, ordered/pairs, 1e-12) // a ratio of sums of halves: round-off only

		points, err := s.ROC(positive)
		if err != nil {
			t.Fatal(err)
		}
		first, last := points[0], points[len(points)-1]
		if first.FPR != 0 || first.TPR != 0 || !math.IsInf(first.Threshold, 1) || last.FPR != 1 || last.TPR != 1 {
			t.Fatalf("ROC runs from %+v to %+v, want (0, 0) at +Inf to (1, 1)", first, last)
		}
		area := 0.0
		for k := 1; k < len(points); k++ {
			a, b := points[k-1], points[k]
			if b.FPR < a.FPR || b.TPR < a.TPR || b.Threshold >= a.Threshold {
				t.Fatalf("ROC point %d %+v does not follow %+v", k, b, a)
			}
			area += (b.FPR - a.FPR) * (a.TPR + b.TPR) / 2
		}
		near(t, "trapezoid area", area, auc, 1e-12)
	}
}

func TestAUCOneClass(t *testing.T) {
	s := twoClass([]int{1, 1}, []float64{0.2, 0.9})
	if _, err := s.AUC(1); !errors.Is(err, ErrOneClass) {
		t.Errorf("AUC with no negative row: error %v, want ErrOneClass", err)
	}
	if _, err := s.ROC(0); !errors.Is(err, ErrOneClass) {
		t.Errorf("ROC with no positive row: error %v, want ErrOneClass", err)
	}
	if _, err := s.AUC(2); !errors.Is(err, ErrClassOutOfRange) {
		t.Errorf("AUC of class 2 of 2: error %v, want ErrClassOutOfRange", err)
	}
}

// TestLogLossBrierWorkedByHand, two classes, outputs y = 0.8, 0.3, 0.6, 0.1
// for classes 1, 0, 1, 0: the probabilities of the true classes are 0.8,
// 0.7, 0.6, 0.9, so
//
//	log loss = −(ln 0.8 + ln 0.7 + ln 0.6 + ln 0.9)/4
//	Brier    = Σ rows 2(y − o)²/4 = 2(0.04 + 0.09 + 0.16 + 0.01)/4 = 0.15.
//
// Three classes, outputs of one unit per class (0.6, 0.3, 0.1) and
// (0.2, 0.2, 0.4) for classes 0 and 2: the second row's outputs sum to
// 0.8, so its probabilities are (0.25, 0.25, 0.5):
//
//	log loss = −(ln 0.6 + ln 0.5)/2
//	Brier    = ((0.16 + 0.09 + 0.01) + (0.0625 + 0.0625 + 0.25))/2 = 0.635/2.
func TestLogLossBrierWorkedByHand(t *testing.T) {
	two := twoClass([]int{1, 0, 1, 0}, []float64{0.8, 0.3, 0.6, 0.1})
	three := Scored{Classes: 3, Truth: []int{0, 2}, Scores: []float64{0.6, 0.3, 0.1, 0.2, 0.2, 0.4}}
	for _, tc := range []struct {
		name       string
		s          Scored
		loss, brie float64
	}{
		{"two classes", two, -(math.Log(0.8) + math.Log(0.7) + math.Log(0.6) + math.Log(0.9)) / 4, 0.15}, // worked by hand
		{"three classes", three, -(math.Log(0.6) + math.Log(0.5)) / 2, 0.635 / 2},                        // worked by hand
	} {
		t.Run(tc.name, func(t *testing.T) {
			loss, err := tc.s.LogLoss()
			if err != nil {
				t.Fatal(err)
			}
			near(t, "log loss", loss, tc.loss, 1e-12) // a few logs and divisions: round-off only
			brier, err := tc.s.Brier()
			if err != nil {
				t.Fatal(err)
			}
			near(t, "Brier", brier, tc.brie, 1e-12)
		})
	}
}

// Outputs of exactly 0 and 1 (a saturated logistic unit) give a finite log
// loss, −ln ε for a confident miss; scores outside [0, 1] (linear units)
// are refused.
func TestLogLossEdges(t *testing.T) {
	s := twoClass([]int{1, 0}, []float64{0, 0})
	loss, err := s.LogLoss()
	if err != nil {
		t.Fatal(err)
	}
	near(t, "log loss", loss, -math.Log(probabilityFloor)/2, 1e-9) // one confident miss, one confident hit: common practice clipping
	linear := twoClass([]int{1, 0}, []float64{1.4, -0.2})
	if _, err := linear.LogLoss(); err == nil {
		t.Error("log loss of linear outputs: no error")
	}
	if _, err := linear.Brier(); err == nil {
		t.Error("Brier of linear outputs: no error")
	}
	bad := Scored{Classes: 2, Truth: []int{0}, Scores: []float64{0.5}}
	if _, err := bad.LogLoss(); !errors.Is(err, ErrLengthMismatch) {
		t.Errorf("one score for two classes: error %v, want ErrLengthMismatch", err)
	}
}

// A tally fed in batches gives the figures of all the rows at once: the
// same ROC curve and area, the same log loss and Brier score up to the
// round-off of summing in another grouping.
func TestScoreTallyInBatches(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 0))
	all := Scored{Classes: 2}
	tally := NewScoreTally(2, 1, fit.Logistic)
	for range 7 {
		batch := Scored{Classes: 2}
		for range 1 + rng.IntN(40) {
			y := float64(rng.IntN(20)) / 19
			batch.Truth = append(batch.Truth, rng.IntN(2))
			batch.Scores = append(batch.Scores, 1-y, y)
		}
		if err := tally.Add(batch); err != nil {
			t.Fatal(err)
		}
		if err := all.Append(batch); err != nil {
			t.Fatal(err)
		}
	}
	if tally.Rows() != len(all.Truth) {
		t.Fatalf("tally of %d rows, want %d", tally.Rows(), len(all.Truth))
	}
	wantAUC, err := all.AUC(1)
	if err != nil {
		t.Fatal(err)
	}
	gotAUC, err := tally.AUC()
	if err != nil {
		t.Fatal(err)
	}
	if gotAUC != wantAUC {
		t.Errorf("tally AUC %v, all rows %v", gotAUC, wantAUC)
	}
	wantROC, _ := all.ROC(1)
	gotROC, _ := tally.ROC()
	if !reflect.DeepEqual(gotROC, wantROC) {
		t.Error("the tally's ROC curve differs from that of all the rows")
	}
	wantLoss, _ := all.LogLoss()
	wantBrier, _ := all.Brier()
	gotLoss, ok := tally.LogLoss()
	gotBrier, _ := tally.Brier()
	if !ok {
		t.Fatal("logistic units give no log loss")
	}
	near(t, "log loss", gotLoss, wantLoss, 1e-12) // sums of a few hundred logs, grouped otherwise
	near(t, "Brier", gotBrier, wantBrier, 1e-12)

	linear := NewScoreTally(2, -1, fit.Linear)
	if err := linear.Add(Scored{Classes: 2, Truth: []int{0}, Scores: []float64{3, -1}}); err != nil {
		t.Fatalf("linear scores outside [0, 1]: %v", err)
	}
	if _, ok := linear.LogLoss(); ok {
		t.Error("linear units give a log loss")
	}
	if roc, err := linear.ROC(); roc != nil || err != nil {
		t.Errorf("a tally without a positive class gives a ROC curve %v, %v", roc, err)
	}
	if err := linear.Add(Scored{Classes: 3, Truth: []int{0}, Scores: []float64{0, 0, 1}}); !errors.Is(err, ErrLengthMismatch) {
		t.Errorf("three classes into a tally of two: %v", err)
	}
}
