package evaluate

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"deltafit/fit"
	"deltafit/ingest/tabular"
)

// Trace is the record of the first weight updates of a fit: what the rule
// did with each row presented, for checking it by hand.
type Trace struct {
	Rule string  `json:"rule"`
	Unit string  `json:"unit"`
	Rate float64 `json:"rate"` // the rate of the first update
	// Inputs name the input units (the encoding plan's names), Units the
	// output units (one per class, or with two classes one unit named
	// after the class it fires for).
	Inputs []string `json:"inputs"`
	Units  []string `json:"units"`
	// Deferred is set when the rule applies an epoch's changes at its end
	// (batch and one-pass rules): each change is then computed with the
	// weights the epoch started with.
	Deferred bool `json:"deferred"`
	// L2 is the weight decay: before each change the weights (not the
	// biases) shrink by 1 − rate·L2, which the changes shown leave out.
	L2 float64 `json:"l2"`
	// Averaged is set when the fit returns the average of the running
	// weights over its later epochs; the changes shown are those of the
	// running weights.
	Averaged bool           `json:"averaged"`
	Updates  []TracedUpdate `json:"updates"`
	// Stop is why training ended when it ended before the updates asked
	// for; empty otherwise.
	Stop string `json:"stop,omitempty"`
}

// TracedUpdate is one row presented to the rule and the change it made.
type TracedUpdate struct {
	Step    int       `json:"step"` // from 1
	Epoch   int       `json:"epoch"`
	Row     int       `json:"row"` // the row's number in the input
	Class   string    `json:"class"`
	Targets []float64 `json:"targets"`
	Outputs []float64 `json:"outputs"` // before the update
	Errors  []float64 `json:"errors"`  // targets − outputs
	// Rate is the factor of the update: Δw = Rate · signal · x, the
	// signal being t − y for the delta rule. It is read off the update
	// (Steps/Signal), and includes any decay of the rate, and 1/rows in a
	// batch epoch.
	Rate float64 `json:"rate"`
	// Changes are the largest changes of the weights, largest |Δw| first,
	// ties in the order of the units, then of the inputs.
	Changes []WeightChange `json:"changes"`
	// LossSoFar is the mean of (t − y)² over the rows presented so far
	// and the units, with the outputs before each update.
	LossSoFar float64 `json:"loss_so_far"`
}

// WeightChange is the change of one weight: from input Input (or the
// bias, "(bias)", whose activity is 1) to output unit Unit.
type WeightChange struct {
	Input    string  `json:"input"`
	Unit     string  `json:"unit"`
	Activity float64 `json:"activity"` // x_i, the sending unit's activity
	Delta    float64 `json:"delta"`    // Δw = rate · signal · x_i
}

// BiasName names the bias among the inputs of a trace.
const BiasName = "(bias)"

// TraceFit fits l on all rows of d exactly as Train does and records its
// first steps updates (steps ≥ 1), each with its top largest weight
// changes (top ≤ 0: all of them). Training stops once they are recorded.
func TraceFit(ctx context.Context, d *tabular.Dataset, l Learner, steps, top int) (*Trace, error) {
	if steps < 1 {
		return nil, fmt.Errorf("evaluate: trace of %d updates: want at least 1", steps)
	}
	plan, patterns, _, err := l.Encode(ctx, d, nil)
	if err != nil {
		return nil, inFile(err, d.Table.Name)
	}
	rule, unit := l.Fit.Rule, l.Fit.Unit
	if rule == nil {
		rule = fit.Delta{}
	}
	if fixed, ok := rule.(fit.OutputUnit); ok {
		unit = fixed.OutputUnit()
	}
	onePass := false
	if op, ok := rule.(fit.OnePass); ok {
		onePass = op.OnePass()
	}
	t := &Trace{Rule: rule.Name(), Unit: unit.String(), Inputs: plan.UnitNames(), Units: unitNames(d.Labels),
		L2: l.Fit.L2, Averaged: !l.Fit.LastIterate && !l.Fit.Batch && !onePass}
	run, cancel := context.WithCancel(ctx)
	defer cancel()
	rec := &traceRecorder{trace: t, rule: rule, d: d, patterns: patterns, steps: steps, top: top, done: cancel,
		row: make([]float64, patterns.Inputs())}
	opts := l.Fit
	opts.Recorder = rec
	if opts.Workers <= 0 {
		opts.Workers = 1
	}
	res, err := fit.TrainContext(run, patterns, d.Classes, len(d.Labels), opts)
	switch {
	case err == nil:
		if len(t.Updates) < steps {
			t.Stop = res.Stop
		}
	case ctx.Err() == nil && errors.Is(err, context.Canceled) && len(t.Updates) == steps:
		// Stopped here, once the updates were recorded.
	default:
		return nil, err
	}
	if len(t.Updates) > 0 {
		t.Rate = t.Updates[0].Rate
	}
	return t, nil
}

// unitNames names the output units of a network for the class labels.
func unitNames(labels []string) []string {
	if len(labels) == 2 {
		return labels[1:]
	}
	return slices.Clone(labels)
}

// traceRecorder turns the trainer's updates into traced updates.
type traceRecorder struct {
	trace    *Trace
	rule     fit.Rule
	d        *tabular.Dataset
	patterns fit.Store
	steps    int
	top      int
	done     context.CancelFunc
	row      []float64
	squares  float64 // Σ (t − y)² so far
}

func (r *traceRecorder) RecordEpoch(fit.EpochStats) error { return nil }

func (r *traceRecorder) RecordUpdate(u *fit.Update) {
	t := r.trace
	if len(t.Updates) >= r.steps {
		return
	}
	if len(t.Updates) == 0 {
		t.Deferred = u.Deferred
	}
	x := r.patterns.RowTo(r.row, u.Row)
	tu := TracedUpdate{
		Step:    len(t.Updates) + 1,
		Epoch:   u.Epoch,
		Row:     r.d.Table.RowNumber(u.Row),
		Class:   r.d.Labels[u.Class],
		Targets: slices.Clone(u.Targets),
		Outputs: slices.Clone(u.Outputs),
		Errors:  make([]float64, len(u.Targets)),
	}
	for j := range u.Targets {
		tu.Errors[j] = u.Targets[j] - u.Outputs[j]
		r.squares += tu.Errors[j] * tu.Errors[j]
		if signal := r.rule.Signal(u.Targets[j], u.Outputs[j]); tu.Rate == 0 && signal != 0 {
			tu.Rate = u.Steps[j] / signal
		}
	}
	tu.LossSoFar = r.squares / float64(tu.Step*len(u.Targets))
	for j, step := range u.Steps {
		for i, xi := range x {
			delta := step * xi
			if delta == 0 {
				delta = 0 // a negative step times a silent input is −0: show it as 0
			}
			tu.Changes = append(tu.Changes, WeightChange{Input: t.Inputs[i], Unit: t.Units[j], Activity: xi, Delta: delta})
		}
		tu.Changes = append(tu.Changes, WeightChange{Input: BiasName, Unit: t.Units[j], Activity: 1, Delta: step})
	}
	slices.SortStableFunc(tu.Changes, func(a, b WeightChange) int {
		return cmp.Compare(math.Abs(b.Delta), math.Abs(a.Delta))
	})
	if r.top > 0 && len(tu.Changes) > r.top {
		tu.Changes = slices.Clip(tu.Changes[:r.top])
	}
	t.Updates = append(t.Updates, tu)
	if len(t.Updates) == r.steps {
		r.done()
	}
}
