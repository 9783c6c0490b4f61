package pipeline

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/floats"

	"deltafit/fit"
	"deltafit/ingest/tabular"
)

// The training passes. Each pass reads every block once and, for each
// model still training, computes with the weights the pass starts with
// (a side input):
//
//   - the measurement of those weights (fit.EpochSums: loss and errors),
//     which is the previous epoch's entry of the history;
//   - batch mode and one-pass rules: the update sums Σ signal·x and
//     Σ signal (fit.SumUpdates);
//   - averaged mode: one online delta-rule epoch over the block's training
//     rows, started from those weights;
//   - in the first pass, the input correlation sums Σ x̃x̃ᵀ
//     (fit.Correlation), whose largest eigenvalue gives the automatic rate.
//
// One Combine adds the blocks' sums in block order; the update step then
// records the measurement, asks the stop rules, and applies the update.

// epochPartial is one model's sums over one block.
type epochPartial struct {
	Model       int              `json:"model"`
	Measure     fit.EpochSums    `json:"measure"`
	Updates     *fit.UpdateSums  `json:"updates,omitempty"`
	Correlation *fit.Correlation `json:"correlation,omitempty"`
	// Averaged mode: the block's weights after its online epoch, times
	// its training rows, and those rows.
	Weighted []float64 `json:"weighted,omitempty"`
	Biased   []float64 `json:"biased,omitempty"`
	Rows     int       `json:"rows"`
}

// blockData is a block encoded for each plan, with its classes and folds.
type blockData struct {
	block    *block
	classes  []int
	rowFolds []int          // nil without folds
	patterns []fit.Patterns // per plan, encoded on demand
}

func newBlockData(c *Config, s *State, b *block, folds *foldIndex) (*blockData, error) {
	classes, err := tabular.TargetClasses(b.Table, c.Target, s.Labels)
	if err != nil {
		return nil, err
	}
	rowFolds, err := blockRowFolds(c, b, folds)
	if err != nil {
		return nil, err
	}
	return &blockData{block: b, classes: classes, rowFolds: rowFolds, patterns: make([]fit.Patterns, len(s.Plans))}, nil
}

// patternsOf returns the block's rows encoded with plan p.
func (d *blockData) patternsOf(s *State, p int) (fit.Patterns, error) {
	if d.patterns[p].Values != nil || d.patterns[p].Rows > 0 {
		return d.patterns[p], nil
	}
	plan := s.Plans[p]
	cols, err := plan.Bind(d.block.Table)
	if err != nil {
		return fit.Patterns{}, err
	}
	values, _ := plan.EncodeTo(nil, cols, nil)
	d.patterns[p] = fit.Patterns{Width: plan.Width(), Values: values, Rows: d.block.Table.Rows}
	return d.patterns[p], nil
}

// trainingRows returns the rows of the block that train model m, nil
// meaning all.
func (d *blockData) trainingRows(m *ModelState) []int {
	if m.Fold == 0 || d.rowFolds == nil {
		return nil
	}
	return planRows(m.Fold, d.rowFolds)
}

// epochBlock is a training pass's work on one block: one partial per model
// still training.
func epochBlock(c *Config, s *State, d *blockData) ([]epochPartial, error) {
	var parts []epochPartial
	for k, m := range s.Models {
		if m.Done {
			continue
		}
		p, err := d.patternsOf(s, m.Plan)
		if err != nil {
			return nil, err
		}
		rule, err := m.rule(c)
		if err != nil {
			return nil, err
		}
		rows := d.trainingRows(m)
		part := epochPartial{Model: k}
		updates, measure := fit.SumUpdates(m.Network, rule, p, d.classes, rows)
		part.Measure, part.Rows = measure, measure.Rows
		averaged := c.mode() == ModeAveraged && !m.onePass(c)
		if !averaged {
			part.Updates = &updates
		}
		if !m.RateSet {
			part.Correlation = fit.NewCorrelation(p.Width)
			part.Correlation.AddRows(p, rows)
		}
		if averaged && m.RateSet && part.Rows > 0 {
			net := onlineEpoch(m.Network, rule, m.epochRate(c), c.L2, p, d.classes, rows, blockStream(c, d.block), m.Updates+1)
			n := float64(part.Rows)
			for j, w := range net.Weights {
				part.Weighted = append(part.Weighted, w...)
				floats.Scale(n, part.Weighted[j*p.Width:])
			}
			part.Biased = append(part.Biased, net.Biases...)
			floats.Scale(n, part.Biased)
		}
		parts = append(parts, part)
	}
	return parts, nil
}

// blockStream is the first PCG seed of a block's visiting orders: a
// function of the seed and the block's place in the data (its file's place
// among the keys, its index in the file), not of the runner. The first
// block of the first file gets the seed itself (splitmix64 maps 0 to 0),
// so with one block the averaged mode visits the rows as fit.Train online.
func blockStream(c *Config, b *block) uint64 {
	file := slices.Index(slices.Sorted(slices.Values(c.Keys)), b.File)
	return c.Seed ^ mix64(uint64(file)<<32|uint64(b.Index))
}

// onlineEpoch returns a copy of net after online epoch epoch of rule at
// rate over rows of p (nil: all), visited in an order drawn from a PCG
// seeded with (stream, epoch): Δw_j = rate · Signal(t_j, y_j) · x after
// each row (Widrow & Hoff 1960), as fit.Train's online epoch, which draws
// its order from (seed, epoch).
func onlineEpoch(net *fit.Network, rule fit.Rule, rate, l2 float64, p fit.Patterns, classes, rows []int, stream uint64, epoch int) *fit.Network {
	out := *net
	out.Weights = make([][]float64, len(net.Weights))
	for j, w := range net.Weights {
		out.Weights[j] = append([]float64(nil), w...)
	}
	out.Biases = append([]float64(nil), net.Biases...)
	order := rows
	if order == nil {
		order = make([]int, p.Len())
		for i := range order {
			order[i] = i
		}
	} else {
		order = append([]int(nil), rows...)
	}
	rng := rand.New(rand.NewPCG(stream, uint64(epoch)))
	rng.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
	outputs := make([]float64, len(out.Weights))
	for _, i := range order {
		x := p.Row(i)
		outputs = out.OutputsTo(outputs, x)
		if l2 != 0 {
			// Every update first shrinks all the weights by 1 − rate·L2.
			for _, w := range out.Weights {
				floats.Scale(1-rate*l2, w)
			}
		}
		for j, y := range outputs {
			step := rate * rule.Signal(target(&out, j, classes[i]), y)
			if step == 0 {
				continue
			}
			floats.AddScaled(out.Weights[j], step, x)
			out.Biases[j] += step
		}
	}
	return &out
}

// target is unit j's target for a row of class c, as fit's trainer sets it.
func target(net *fit.Network, j, c int) float64 {
	member := c == j
	if len(net.Weights) == 1 {
		member = c == 1
	}
	if member {
		return net.On
	}
	return net.Off
}

// epochTotals are the blocks' sums per model, added in block order.
type epochTotals struct {
	Err    string         `json:"error,omitempty"`
	Models []epochPartial `json:"models"` // indexed by model; Model -1 for none
}

// reduceEpoch adds the files' partials of a training pass in key order.
func reduceEpoch(parts []Partial) *epochTotals {
	var total *blockEpoch
	for _, part := range parts {
		var b blockEpoch
		if err := json.Unmarshal(part.Data, &b); err != nil {
			return &epochTotals{Err: fmt.Sprintf("pipeline: epoch partial: %v", err)}
		}
		if b.Err != "" {
			return &epochTotals{Err: b.Err}
		}
		if total == nil {
			total = &b
			continue
		}
		if err := total.add(b); err != nil {
			return &epochTotals{Err: err.Error()}
		}
	}
	t := &epochTotals{}
	if total == nil {
		return t
	}
	most := -1
	for _, p := range total.Models {
		most = max(most, p.Model)
	}
	t.Models = make([]epochPartial, most+1)
	for k := range t.Models {
		t.Models[k].Model = -1
	}
	for _, p := range total.Models {
		t.Models[p.Model] = p
	}
	return t
}

// add adds the sums of later rows, model by model.
func (b *blockEpoch) add(next blockEpoch) error {
	for _, p := range next.Models {
		i := slices.IndexFunc(b.Models, func(q epochPartial) bool { return q.Model == p.Model })
		if i < 0 {
			b.Models = append(b.Models, p)
			continue
		}
		if err := b.Models[i].merge(p); err != nil {
			return err
		}
	}
	return nil
}

// blockEpoch is the payload of one block's training partial.
type blockEpoch struct {
	Err    string         `json:"error,omitempty"`
	Models []epochPartial `json:"models"`
}

// merge adds the sums of a later block.
func (p *epochPartial) merge(other epochPartial) error {
	p.Measure.Merge(other.Measure)
	p.Rows += other.Rows
	if p.Updates != nil && other.Updates != nil {
		if err := p.Updates.Merge(*other.Updates); err != nil {
			return err
		}
	}
	if p.Correlation != nil && other.Correlation != nil {
		if err := p.Correlation.Merge(other.Correlation); err != nil {
			return err
		}
	}
	switch {
	case other.Weighted == nil:
	case p.Weighted == nil:
		p.Weighted, p.Biased = other.Weighted, other.Biased
	default:
		floats.Add(p.Weighted, other.Weighted)
		floats.Add(p.Biased, other.Biased)
	}
	return nil
}

// update applies a training pass's totals to the state it started from.
// It is the trainer's epoch loop (fit/train.go) spread over passes: the
// measurement of the starting weights is the history's entry for the
// epoch that made them; the stop rules are asked in the same order; the
// update is then applied as fit.Train applies it.
func update(c *Config, s *State, totals *epochTotals) *State {
	if s.Err != "" {
		return s
	}
	if totals.Err != "" {
		return failed(fmt.Errorf("%s", totals.Err))
	}
	s.Passes++
	for k, m := range s.Models {
		if m.Done {
			continue
		}
		if k >= len(totals.Models) || totals.Models[k].Model != k {
			return failed(fmt.Errorf("pipeline: no sums for model %d in pass %d", k, s.Passes))
		}
		if err := m.step(c, &totals.Models[k]); err != nil {
			return failed(err)
		}
	}
	return s
}

// step moves one model on by one pass's sums.
func (m *ModelState) step(c *Config, t *epochPartial) error {
	if m.Updates > 0 {
		stats := t.Measure.Stats(m.Updates)
		if !finiteNetwork(m.Network) || math.IsNaN(stats.Loss) || math.IsInf(stats.Loss, 0) || stats.Loss > divergedLoss {
			return m.diverged(m.Updates)
		}
		m.History = append(m.History, stats)
		// The best losses are not kept between passes (the state's JSON
		// leaves them out, as the model file does): track them again.
		for i := range m.History {
			m.History[i].TrackBest(m.History[:i])
		}
		if m.Stop, m.StopRule = m.stopReason(c); m.Stop != "" {
			m.Done = true
			return nil
		}
	}
	rateKnown := m.RateSet
	if !m.RateSet {
		if err := m.setRate(c, t.Correlation); err != nil {
			return err
		}
	}
	switch {
	case t.Updates != nil && m.onePass(c):
		// fit.Train's one-pass epoch: rate times the summed updates.
		m.apply(m.Rate, t.Updates)
	case t.Updates != nil:
		// fit.Train's batch epoch: with L2 the weights first shrink by
		// 1 − rate·L2, then rate/N times the summed updates.
		rate := m.epochRate(c)
		if c.L2 != 0 {
			for _, w := range m.Network.Weights {
				floats.Scale(1-rate*c.L2, w)
			}
		}
		m.apply(rate/float64(m.TrainRows), t.Updates)
	case rateKnown && t.Rows > 0:
		// Parameter mixing: the blocks' weights averaged by row count.
		n := float64(t.Rows)
		for j, w := range m.Network.Weights {
			for i := range w {
				w[i] = t.Weighted[j*len(w)+i] / n
			}
			m.Network.Biases[j] = t.Biased[j] / n
		}
		m.Updates++
	}
	if !finiteNetwork(m.Network) {
		return m.diverged(m.Updates)
	}
	if c.Trace && m.Updates > len(m.Trace) {
		w := Weights{Biases: slices.Clone(m.Network.Biases)}
		for _, row := range m.Network.Weights {
			w.Weights = append(w.Weights, slices.Clone(row))
		}
		m.Trace = append(m.Trace, w)
	}
	return nil
}

// epochRate is the rate of the next epoch, m.Updates+1, lowered by
// Config.Decay as fit.Train lowers it.
func (m *ModelState) epochRate(c *Config) float64 {
	if c.Decay == 0 {
		return m.Rate
	}
	return m.Rate / (1 + c.Decay*float64(m.Updates))
}

// divergedLoss is the loss past which fit.Train counts a run as diverged.
const divergedLoss = 1e12

func (m *ModelState) diverged(epoch int) error {
	return fmt.Errorf("%w at epoch %d (rate %.4g, stable below 2/λmax = %.4g)", fit.ErrDiverged, epoch, m.Rate, 2/m.LambdaMax)
}

// apply adds step times the update sums to the weights and biases.
func (m *ModelState) apply(step float64, u *fit.UpdateSums) {
	width := m.Network.Inputs
	for j, w := range m.Network.Weights {
		floats.AddScaled(w, step, u.Weights[j*width:(j+1)*width])
	}
	floats.AddScaled(m.Network.Biases, step, u.Biases)
	m.Updates++
}

// stopReason returns why training ends after the last epoch of the
// history, or "", and the rule that ended it, as fit.Train asks: a
// one-pass rule after its pass, then fit.StopReason.
func (m *ModelState) stopReason(c *Config) (reason, rule string) {
	if m.onePass(c) {
		return fit.StopOnePass, "one pass of a rule whose update ignores the weights"
	}
	return fit.StopReason(c.stopRules(), m.History, c.epochs())
}

// setRate sets the learning rate, from the correlation sums when it is
// automatic, as fit.AutoRate sets it: batch 1/λmax, online (averaged
// mode) 1/max‖x̃‖², one-pass rules 1/rows.
func (m *ModelState) setRate(c *Config, corr *fit.Correlation) error {
	m.RateSet = true
	if corr == nil {
		return fmt.Errorf("pipeline: no correlation sums for the rate")
	}
	spec, err := corr.Spectrum()
	if err != nil {
		return err
	}
	m.LambdaMax, m.TraceR = spec.LambdaMax, spec.TraceR
	m.RateAuto = c.Rate == 0 || m.Kind == KindHebbian
	if !m.RateAuto {
		m.Rate = c.Rate
		return nil
	}
	opts, err := c.FitOptions()
	if err != nil {
		return err
	}
	if m.Kind == KindHebbian {
		opts.Rule = fit.Hebbian{}
	}
	m.Rate = spec.AutoRate(opts, m.TrainRows)
	return nil
}
