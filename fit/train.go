package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"
	"sync/atomic"
)

// ErrDiverged is returned, wrapped with the epoch, the rate and the
// stability bound 2/λmax, when the weights or the loss stop being finite
// or the loss passes 1e12.
var ErrDiverged = errors.New("fit: weights diverged")

// Defaults of Options.
const (
	DefaultEpochs    = 200
	DefaultTolerance = 1e-9
	// divergedLoss is the loss past which a run counts as diverged.
	divergedLoss = 1e12
)

// Stop reasons of a Result. A Converger of Options.Stop may give others.
const (
	StopZeroErrors = "zero-errors" // ZeroErrors
	StopConverged  = "converged"   // LossChange
	StopEpochs     = "epochs"      // Options.Epochs reached
	StopOnePass    = "one-pass"    // a OnePass rule's single epoch
)

// Options control Train. The zero value trains logistic units with the
// delta rule online at the automatic rate.
type Options struct {
	// Rule is the learning rule; nil means Delta{}.
	Rule Rule
	// Unit is the output unit; the default is Logistic. A rule that
	// implements OutputUnit overrides it (Hebbian: Linear).
	Unit Unit
	// Epochs is the most passes over the patterns; 0 means 200.
	Epochs int
	// Rate is the learning rate; 0 means automatic (see AutoRate).
	// A negative rate is an error.
	Rate float64
	// Tolerance is the tolerance of the default LossChange rule: training
	// stops once the loss changes by less than Tolerance·max(1, previous
	// loss) in an epoch; 0 means 1e-9. It is not used when Stop is set.
	Tolerance float64
	// Seed seeds the order in which each online epoch visits the patterns.
	Seed uint64
	// Batch applies the mean update once per epoch instead of one update
	// per pattern (full-batch gradient descent, whose fixed point for
	// linear units is the least-squares solution).
	Batch bool
	// KeepGoing trains on after a training epoch with zero errors: it
	// leaves ZeroErrors out of the default stop rules. It is not used when
	// Stop is set.
	KeepGoing bool

	// Stop are the rules that may end training early, asked in order
	// after each epoch; the first to give a reason ends it. nil means
	// ZeroErrors{} (unless KeepGoing), then LossChange{Tolerance}. Besides
	// them, training always ends after Epochs epochs (StopEpochs) and
	// after the single epoch of a OnePass rule (StopOnePass, before any
	// rule is asked).
	Stop []Converger
	// Recorder, if not nil, is told of every epoch, and of every update
	// when it is an UpdateRecorder.
	Recorder Recorder
	// Workers is the most goroutines that measure an epoch; 0 means
	// runtime.GOMAXPROCS(0), read once when Train starts. Results do not
	// depend on it. A negative count is an error.
	Workers int
}

// EpochStats are measured after an epoch with the weights it ends with.
type EpochStats struct {
	Epoch  int     `json:"epoch"`  // from 1
	Loss   float64 `json:"loss"`   // mean over patterns and units of (t − y)²
	Errors int     `json:"errors"` // patterns whose class is not the one Classify gives
}

// Result is the outcome of Train.
type Result struct {
	Network   *Network
	Rate      float64 // the rate used
	RateAuto  bool    // whether Rate was chosen automatically
	LambdaMax float64 // largest eigenvalue of R = mean of x̃x̃ᵀ, x̃ = [x, 1]
	TraceR    float64 // trace of R
	History   []EpochStats
	// Stop is why training ended: StopOnePass, StopEpochs or the reason
	// of the stop rule that ended it (by default StopZeroErrors or
	// StopConverged).
	Stop string
}

// Train is TrainContext with a context that is never cancelled.
func Train(p Store, classes []int, numClasses int, opts Options) (*Result, error) {
	return TrainContext(context.Background(), p, classes, numClasses, opts)
}

// TrainContext fits a network to the patterns of p with class labels
// classes[i] in [0, numClasses), numClasses ≥ 2. It neither modifies p nor
// classes.
//
// It checks ctx between epochs and every few thousand patterns within
// one; once ctx is done it returns an error wrapping ctx.Err().
func TrainContext(ctx context.Context, p Store, classes []int, numClasses int, opts Options) (*Result, error) {
	t, err := newTrainer(ctx, p, classes, numClasses, opts)
	if err != nil {
		return nil, err
	}
	return t.run(ctx)
}

// ctxRows is how many patterns a pass goes through between looks at its
// context: often enough to stop promptly, rarely enough to cost nothing.
const ctxRows = 4096

// trainer holds one run's state and every buffer it needs, so that an
// epoch allocates nothing but the goroutines of a parallel measurement.
type trainer struct {
	store   Store
	kernels RowKernels // the store's fast path, or nil
	row     []float64  // scratch row of the training pass, for stores that copy
	n       int        // patterns
	classes []int
	rule    Rule
	opts    Options
	onePass bool // the rule is OnePass: one epoch
	result  Result

	net     *Network
	weights []float64 // units × width, the storage of net.Weights
	biases  []float64 // net.Biases

	order []int // online visiting order
	pcg   *rand.PCG
	rng   *rand.Rand

	sumWeights []float64 // batch accumulators, units × width
	sumBiases  []float64
	outputs    []float64 // per unit: net inputs, then outputs
	steps      []float64 // per unit: a pattern's steps (online) or signals (batch)

	updates UpdateRecorder // Recorder, when it records updates
	update  Update         // handed to updates, its slices reused

	chunkStats   []EpochStats // per measurement chunk
	chunkOutputs [][]float64  // per measuring goroutine
	chunkRows    [][]float64  // per measuring goroutine: scratch rows
}

func newTrainer(ctx context.Context, p Store, classes []int, numClasses int, opts Options) (*trainer, error) {
	if numClasses < 2 {
		return nil, fmt.Errorf("fit: %d classes, want at least 2", numClasses)
	}
	n := len(classes)
	if n == 0 {
		return nil, errors.New("fit: no patterns")
	}
	if err := checkStore(p, n); err != nil {
		return nil, err
	}
	if dense, ok := p.(Patterns); ok && dense.Width == 0 {
		// Bias-only patterns may leave Rows unset: the labels count them.
		dense.Rows = n
		p = dense
	}
	for i, c := range classes {
		if c < 0 || c >= numClasses {
			return nil, fmt.Errorf("fit: pattern %d has class %d, want 0 to %d", i, c, numClasses-1)
		}
	}
	if err := opts.setDefaults(); err != nil {
		return nil, err
	}
	on, off := opts.Rule.Target(true), opts.Rule.Target(false)
	if !finite(on) || !finite(off) || on <= off {
		return nil, fmt.Errorf("fit: rule %s has targets %v for members and %v for others: want finite, members higher", opts.Rule.Name(), on, off)
	}
	unit := opts.Unit
	if fixed, ok := opts.Rule.(OutputUnit); ok {
		unit = fixed.OutputUnit()
	}
	if !unit.valid() {
		return nil, fmt.Errorf("fit: unknown unit %d", int(unit))
	}

	rate, lambdaMax, traceR, err := autoRate(ctx, p, opts.Batch)
	if err != nil {
		return nil, err
	}
	auto := opts.Rate == 0
	onePass := false
	if op, ok := opts.Rule.(OnePass); ok && op.OnePass() {
		onePass, opts.Epochs = true, 1
		if auto {
			rate = 1 / float64(n)
		}
	}
	if !auto {
		rate = opts.Rate
	}

	units, width := unitCount(numClasses), p.Inputs()
	t := &trainer{
		store:   p,
		n:       n,
		classes: classes,
		rule:    opts.Rule,
		opts:    opts,
		onePass: onePass,
		result:  Result{Rate: rate, RateAuto: auto, LambdaMax: lambdaMax, TraceR: traceR},
		weights: make([]float64, units*width),
		biases:  make([]float64, units),
		outputs: make([]float64, units),
		steps:   make([]float64, units),

		chunkStats: make([]EpochStats, (n+measureChunk-1)/measureChunk),
	}
	if k, ok := p.(RowKernels); ok {
		t.kernels = k
	} else {
		t.row = make([]float64, width)
	}
	t.net = &Network{
		Rule:    opts.Rule.Name(),
		Unit:    unit,
		Inputs:  width,
		Classes: numClasses,
		On:      on,
		Off:     off,
		Weights: make([][]float64, units),
		Biases:  t.biases,
	}
	for j := range units {
		t.net.Weights[j] = t.weights[j*width : (j+1)*width : (j+1)*width]
	}
	for range min(opts.Workers, len(t.chunkStats)) {
		t.chunkOutputs = append(t.chunkOutputs, make([]float64, units))
		var row []float64
		if t.kernels == nil {
			row = make([]float64, width)
		}
		t.chunkRows = append(t.chunkRows, row)
	}
	if opts.Batch || onePass {
		t.sumWeights = make([]float64, units*width)
		t.sumBiases = make([]float64, units)
	} else {
		t.order = make([]int, n)
		t.pcg = rand.NewPCG(opts.Seed, 0)
		t.rng = rand.New(t.pcg)
	}
	if u, ok := opts.Recorder.(UpdateRecorder); ok {
		t.updates = u
		t.update = Update{
			Targets:  make([]float64, units),
			Outputs:  make([]float64, units),
			Steps:    make([]float64, units),
			Deferred: opts.Batch || onePass,
		}
	}
	return t, nil
}

// setDefaults fills in the defaults of o and checks what is left.
func (o *Options) setDefaults() error {
	if o.Rule == nil {
		o.Rule = Delta{}
	}
	switch {
	case o.Epochs < 0:
		return fmt.Errorf("fit: negative epoch count %d", o.Epochs)
	case o.Epochs == 0:
		o.Epochs = DefaultEpochs
	}
	switch {
	case math.IsNaN(o.Rate) || math.IsInf(o.Rate, 0) || o.Rate < 0:
		return fmt.Errorf("fit: learning rate %v: want a finite rate ≥ 0 (0 is automatic)", o.Rate)
	case math.IsNaN(o.Tolerance) || math.IsInf(o.Tolerance, 0) || o.Tolerance < 0:
		return fmt.Errorf("fit: tolerance %v: want a finite tolerance ≥ 0", o.Tolerance)
	case o.Tolerance == 0:
		o.Tolerance = DefaultTolerance
	}
	switch {
	case o.Workers < 0:
		return fmt.Errorf("fit: negative worker count %d", o.Workers)
	case o.Workers == 0:
		o.Workers = runtime.GOMAXPROCS(0)
	}
	if o.Stop == nil {
		if !o.KeepGoing {
			o.Stop = append(o.Stop, ZeroErrors{})
		}
		o.Stop = append(o.Stop, LossChange{Tolerance: o.Tolerance})
	}
	for k, rule := range o.Stop {
		if rule == nil {
			return fmt.Errorf("fit: stop rule %d is nil", k)
		}
	}
	return nil
}

func (t *trainer) run(ctx context.Context) (*Result, error) {
	for epoch := 1; epoch <= t.opts.Epochs; epoch++ {
		stats, err := t.epoch(ctx, epoch)
		if err != nil {
			return nil, err
		}
		t.result.History = append(t.result.History, stats)
		if t.opts.Recorder != nil {
			if err := t.opts.Recorder.RecordEpoch(stats); err != nil {
				return nil, fmt.Errorf("fit: recorder at epoch %d: %w", epoch, err)
			}
		}
		if !t.weightsFinite() || !finite(stats.Loss) || stats.Loss > divergedLoss {
			return nil, fmt.Errorf("%w at epoch %d (rate %.4g, stable below 2/λmax = %.4g)",
				ErrDiverged, epoch, t.result.Rate, 2/t.result.LambdaMax)
		}
		if t.result.Stop = t.stopReason(); t.result.Stop != "" {
			break
		}
	}
	t.result.Network = t.net
	return &t.result, nil
}

// stopReason returns why training ends after the last epoch of the
// history, or "" to go on.
func (t *trainer) stopReason() string {
	if t.onePass {
		return StopOnePass
	}
	for _, rule := range t.opts.Stop {
		if reason := rule.Converged(t.result.History); reason != "" {
			return reason
		}
	}
	if len(t.result.History) == t.opts.Epochs {
		return StopEpochs
	}
	return ""
}

// stopped returns the error of a run whose context is done, or nil.
func stopped(ctx context.Context, epoch int) error {
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("fit: training stopped in epoch %d: %w", epoch, err)
	}
	return nil
}

// epoch trains one epoch and measures the weights it ends with.
func (t *trainer) epoch(ctx context.Context, epoch int) (EpochStats, error) {
	if err := stopped(ctx, epoch); err != nil {
		return EpochStats{}, err
	}
	var err error
	switch {
	case t.onePass:
		err = t.onePassEpoch(ctx, epoch)
	case t.opts.Batch:
		err = t.batchEpoch(ctx, epoch)
	default:
		err = t.onlineEpoch(ctx, epoch)
	}
	if err != nil {
		return EpochStats{}, err
	}
	stats := t.measure(ctx, epoch)
	return stats, stopped(ctx, epoch)
}

// target returns unit j's target for a pattern of class c.
func (t *trainer) target(j, c int) float64 {
	member := c == j
	if len(t.biases) == 1 {
		member = c == 1
	}
	if member {
		return t.net.On
	}
	return t.net.Off
}

// The pattern kernels of the trainer. rowOf fetches pattern i once per
// visit; netInputsTo and addRowTo then compute with it for every unit at
// once, or with the store's RowKernels, which need no row (rowOf returns
// nil). Choosing once per pattern, not per unit, keeps the dense path as
// fast as plain calls to dot and axpy.

// rowOf returns pattern i, written into buf by a store that copies, or nil
// when the store's kernels stand in for it.
func (t *trainer) rowOf(i int, buf []float64) []float64 {
	if t.kernels != nil {
		return nil
	}
	return t.store.RowTo(buf, i)
}

// netInputsTo stores the net input w_j·x + b_j of every unit j for pattern
// i, whose row is x, in dst.
func (t *trainer) netInputsTo(dst []float64, i int, x []float64) {
	width := len(t.weights) / len(t.biases)
	if t.kernels != nil {
		for j := range dst {
			dst[j] = t.kernels.DotRow(i, t.weights[j*width:(j+1)*width]) + t.biases[j]
		}
		return
	}
	for j := range dst {
		dst[j] = dot(t.weights[j*width:(j+1)*width], x) + t.biases[j]
	}
}

// addRowTo adds steps[j] times pattern i, whose row is x, to row j of dst
// (units × inputs) for every unit j; with skipZero, a zero step is not
// added.
func (t *trainer) addRowTo(dst, steps []float64, i int, x []float64, skipZero bool) {
	width := len(dst) / len(steps)
	for j, step := range steps {
		if skipZero && step == 0 {
			continue
		}
		if t.kernels != nil {
			t.kernels.AxpyRow(step, i, dst[j*width:(j+1)*width])
		} else {
			axpy(step, x, dst[j*width:(j+1)*width])
		}
	}
}

// onlineEpoch updates the weights after each pattern, visiting them in an
// order drawn from a PCG seeded by (Seed, epoch).
func (t *trainer) onlineEpoch(ctx context.Context, epoch int) error {
	t.shuffle(epoch)
	rate := t.result.Rate
	for k, i := range t.order {
		if k%ctxRows == ctxRows-1 {
			if err := stopped(ctx, epoch); err != nil {
				return err
			}
		}
		x, c := t.rowOf(i, t.row), t.classes[i]
		t.netInputsTo(t.outputs, i, x)
		for j, z := range t.outputs {
			target := t.target(j, c)
			output := t.net.Unit.activate(z)
			t.steps[j] = rate * t.rule.Signal(target, output)
			if t.updates != nil {
				t.update.Targets[j], t.update.Outputs[j], t.update.Steps[j] = target, output, t.steps[j]
			}
		}
		t.addRowTo(t.weights, t.steps, i, x, true)
		for j, step := range t.steps {
			if step != 0 {
				t.biases[j] += step
			}
		}
		if t.updates != nil {
			t.recordUpdate(epoch, i)
		}
	}
	return nil
}

// recordUpdate hands the update of pattern i, whose per-unit values are
// in t.update, to the update recorder.
func (t *trainer) recordUpdate(epoch, i int) {
	t.update.Epoch, t.update.Row, t.update.Class = epoch, i, t.classes[i]
	t.updates.RecordUpdate(&t.update)
}

// shuffle sets t.order to the visiting order of epoch: a function of
// (Seed, epoch) alone.
func (t *trainer) shuffle(epoch int) {
	for i := range t.order {
		t.order[i] = i
	}
	t.pcg.Seed(t.opts.Seed, uint64(epoch))
	order := t.order
	t.rng.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
}

// batchEpoch applies the mean of the per-pattern updates once, all computed
// with the weights the epoch starts with.
func (t *trainer) batchEpoch(ctx context.Context, epoch int) error {
	step := t.result.Rate / float64(t.n)
	if err := t.sumUpdates(ctx, epoch, step); err != nil {
		return err
	}
	axpy(step, t.sumWeights, t.weights)
	axpy(step, t.sumBiases, t.biases)
	return nil
}

// onePassEpoch applies rate times the summed updates of a OnePass rule.
// Summing before scaling keeps equal sums equal (for 0/1 inputs the sums
// are whole numbers, exact in float64), so ties between classes stay ties
// whatever the rate and the order of the rows.
func (t *trainer) onePassEpoch(ctx context.Context, epoch int) error {
	if err := t.sumUpdates(ctx, epoch, t.result.Rate); err != nil {
		return err
	}
	axpy(t.result.Rate, t.sumWeights, t.weights)
	axpy(t.result.Rate, t.sumBiases, t.biases)
	return nil
}

// sumUpdates sums each pattern's update, without the rate, computed with
// the weights the epoch starts with. rate is the factor the sums will be
// applied with, which the recorded updates' steps include.
func (t *trainer) sumUpdates(ctx context.Context, epoch int, rate float64) error {
	clear(t.sumWeights)
	clear(t.sumBiases)
	for i, c := range t.classes {
		if i%ctxRows == ctxRows-1 {
			if err := stopped(ctx, epoch); err != nil {
				return err
			}
		}
		x := t.rowOf(i, t.row)
		t.netInputsTo(t.outputs, i, x)
		for j, z := range t.outputs {
			target := t.target(j, c)
			output := t.net.Unit.activate(z)
			t.steps[j] = t.rule.Signal(target, output)
			if t.updates != nil {
				t.update.Targets[j], t.update.Outputs[j], t.update.Steps[j] = target, output, rate*t.steps[j]
			}
		}
		t.addRowTo(t.sumWeights, t.steps, i, x, false)
		for j, signal := range t.steps {
			t.sumBiases[j] += signal
		}
		if t.updates != nil {
			t.recordUpdate(epoch, i)
		}
	}
	return nil
}

// measure returns the loss and the error count with the current weights.
//
// The rows are measured in chunks of measureChunk, whose sums are added in
// chunk order, so the result is the same however many goroutines measure:
// up to Options.Workers (and the number of chunks). Once ctx is done no
// chunk is started, and the result is not to be used.
func (t *trainer) measure(ctx context.Context, epoch int) EpochStats {
	chunks := (t.n + measureChunk - 1) / measureChunk
	workers := min(chunks, len(t.chunkOutputs))
	if workers <= 1 {
		for k := range chunks {
			if ctx.Err() != nil {
				break
			}
			t.chunkStats[k] = t.measureChunk(k, t.outputs, t.row)
		}
	} else {
		var next atomic.Int64
		var wg sync.WaitGroup
		for w := range workers {
			wg.Add(1)
			go func(outputs, row []float64) {
				defer wg.Done()
				for k := int(next.Add(1) - 1); k < chunks && ctx.Err() == nil; k = int(next.Add(1) - 1) {
					t.chunkStats[k] = t.measureChunk(k, outputs, row)
				}
			}(t.chunkOutputs[w], t.chunkRows[w])
		}
		wg.Wait()
	}
	stats := EpochStats{Epoch: epoch}
	for _, c := range t.chunkStats[:chunks] {
		stats.Errors += c.Errors
		stats.Loss += c.Loss
	}
	stats.Loss /= float64(t.n * len(t.outputs))
	return stats
}

// measureChunk is the rows per measurement chunk.
const measureChunk = 4096

// measureChunk returns the error count and the summed squared misses of
// chunk k, using outputs and row as its scratch buffers. Its outputs and
// decisions are those of Network.Classify.
func (t *trainer) measureChunk(k int, outputs, row []float64) EpochStats {
	var stats EpochStats
	for i := k * measureChunk; i < min((k+1)*measureChunk, t.n); i++ {
		x, c := t.rowOf(i, row), t.classes[i]
		t.netInputsTo(outputs, i, x)
		for j, z := range outputs {
			outputs[j] = t.net.Unit.activate(z)
		}
		if t.net.decide(outputs) != c {
			stats.Errors++
		}
		for j, output := range outputs {
			miss := t.target(j, c) - output
			stats.Loss += miss * miss
		}
	}
	return stats
}

func (t *trainer) weightsFinite() bool {
	for _, w := range t.weights {
		if !finite(w) {
			return false
		}
	}
	for _, b := range t.biases {
		if !finite(b) {
			return false
		}
	}
	return true
}
