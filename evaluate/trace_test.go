package evaluate

import (
	"context"
	"math"
	"slices"
	"testing"

	"deltafit/fit"
	"deltafit/ingest/encode"
	"deltafit/internal/refdata"
)

// The delta rule changes each weight by rate·(t − y)·x (Widrow & Hoff
// 1960): every traced change has that value, so its sign is the sign of
// (t − y)·x, and a silent input (x = 0) changes nothing.
func TestTraceXORFollowsTheDeltaRule(t *testing.T) {
	d, err := refdata.Dataset("xor.csv", "y")
	if err != nil {
		t.Fatal(err)
	}
	l := Learner{Fit: fit.Options{Seed: 1}}
	tr, err := TraceFit(context.Background(), d, l, 12, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(tr.Updates) != 12 || tr.Rule != "delta" || tr.Unit != "logistic" || tr.Deferred {
		t.Fatalf("trace of %d updates, rule %s, unit %s, deferred %v; want 12 online delta-rule updates of logistic units",
			len(tr.Updates), tr.Rule, tr.Unit, tr.Deferred)
	}
	if !slices.Equal(tr.Units, []string{"1"}) || !slices.Equal(tr.Inputs, []string{"x1>0", "x2>0"}) {
		t.Fatalf("inputs %v, units %v", tr.Inputs, tr.Units)
	}
	for _, u := range tr.Updates {
		if len(u.Changes) != 3 { // two inputs and the bias, all asked for
			t.Fatalf("step %d: %d changes, want 3", u.Step, len(u.Changes))
		}
		for _, c := range u.Changes {
			want := u.Rate * u.Errors[0] * c.Activity
			if math.Abs(c.Delta-want) > 1e-15 {
				t.Errorf("step %d, %s → %s: Δw %v, want rate·(t − y)·x = %v", u.Step, c.Input, c.Unit, c.Delta, want)
			}
			if sign(c.Delta) != sign(u.Errors[0]*c.Activity) {
				t.Errorf("step %d, %s → %s: Δw %v has not the sign of (t − y)·x = %v", u.Step, c.Input, c.Unit, c.Delta, u.Errors[0]*c.Activity)
			}
		}
		if u.Targets[0] != map[string]float64{"0": 0, "1": 1}[u.Class] {
			t.Errorf("step %d: row of class %s has target %v", u.Step, u.Class, u.Targets[0])
		}
	}
	// The first epoch presents each of the 4 rows once, by input number.
	var rows []int
	for _, u := range tr.Updates[:4] {
		rows = append(rows, u.Row)
	}
	slices.Sort(rows)
	if !slices.Equal(rows, []int{1, 2, 3, 4}) {
		t.Errorf("the first epoch presents rows %v, want 1 to 4 once each", rows)
	}
	// The first output, with zero weights, is σ(0) = 1/2: the loss of the
	// first step is (t − 1/2)² = 1/4 (worked by hand).
	if got := tr.Updates[0].LossSoFar; got != 0.25 {
		t.Errorf("loss after the first step %v, want 0.25", got)
	}
}

func sign(x float64) int {
	switch {
	case x > 0:
		return 1
	case x < 0:
		return -1
	}
	return 0
}

// What the trace shows is what fit does: the changes of the first E epochs,
// summed from zero weights, are the weights of a fit of E epochs.
func TestTraceSumsToTheFit(t *testing.T) {
	d := irisDataset(t)
	// The last weights, not their average (fit.Options.LastIterate): the
	// average is not a sum of the changes.
	l := Learner{Fit: fit.Options{Seed: 4, Epochs: 2, LastIterate: true}}
	l.Plan.Numeric = encode.Encoding{Method: "thermometer", Bins: 4}
	tr, err := TraceFit(context.Background(), d, l, 2*d.Table.Rows, 0)
	if err != nil {
		t.Fatal(err)
	}
	fitted, err := l.Train(d, nil)
	if err != nil {
		t.Fatal(err)
	}
	net := fitted.Classifier.Network
	sums := map[[2]string]float64{}
	for _, u := range tr.Updates {
		for _, c := range u.Changes {
			sums[[2]string{c.Input, c.Unit}] += c.Delta
		}
	}
	for j, unit := range tr.Units {
		for i, input := range tr.Inputs {
			// The same additions in the same order as the trainer's: equal
			// up to the round-off of a few hundred additions.
			if got, want := sums[[2]string{input, unit}], net.Weights[j][i]; math.Abs(got-want) > 1e-12 {
				t.Errorf("weight %s → %s: traced changes sum to %v, the fit has %v", input, unit, got, want)
			}
		}
		if got, want := sums[[2]string{BiasName, unit}], net.Biases[j]; math.Abs(got-want) > 1e-12 {
			t.Errorf("bias of %s: traced changes sum to %v, the fit has %v", unit, got, want)
		}
	}
	if tr.Rate != fitted.Result.Rate {
		t.Errorf("traced rate %v, the fit's %v", tr.Rate, fitted.Result.Rate)
	}
}

// A trace keeps the largest changes first and stops at the steps asked for;
// the Hebbian rule's changes are deferred to the end of its one pass.
func TestTraceTopAndDeferred(t *testing.T) {
	d := irisDataset(t)
	tr, err := TraceFit(context.Background(), d, Learner{Fit: fit.Options{Seed: 1}}, 5, 4)
	if err != nil {
		t.Fatal(err)
	}
	if len(tr.Updates) != 5 {
		t.Fatalf("%d updates, want 5", len(tr.Updates))
	}
	for _, u := range tr.Updates {
		if len(u.Changes) != 4 {
			t.Fatalf("step %d: %d changes, want the top 4", u.Step, len(u.Changes))
		}
		for k := 1; k < len(u.Changes); k++ {
			if math.Abs(u.Changes[k].Delta) > math.Abs(u.Changes[k-1].Delta) {
				t.Fatalf("step %d: changes not largest first: %v", u.Step, u.Changes)
			}
		}
	}
	hebb, err := TraceFit(context.Background(), d, Learner{Fit: fit.Options{Seed: 1, Rule: fit.Hebbian{}}}, 3, 2)
	if err != nil {
		t.Fatal(err)
	}
	if !hebb.Deferred || hebb.Unit != "linear" || len(hebb.Updates) != 3 {
		t.Errorf("Hebbian trace: deferred %v, unit %s, %d updates; want deferred linear units, 3 updates", hebb.Deferred, hebb.Unit, len(hebb.Updates))
	}
	// AND is learnt in a few epochs: the trace ends there, and says why.
	and, err := refdata.Dataset("and.csv", "y")
	if err != nil {
		t.Fatal(err)
	}
	short, err := TraceFit(context.Background(), and, Learner{Fit: fit.Options{Seed: 1, Rate: 1}}, 10000, 3)
	if err != nil {
		t.Fatal(err)
	}
	if len(short.Updates) >= 10000 || short.Stop == "" || len(short.Updates)%4 != 0 {
		t.Errorf("AND trace: %d updates, stop %q; want whole epochs and a stop reason", len(short.Updates), short.Stop)
	}
}
