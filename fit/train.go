package fit

import (
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

// Stop reasons of a Result.
const (
	StopZeroErrors = "zero-errors"
	StopConverged  = "converged"
	StopEpochs     = "epochs"
	StopOnePass    = "one-pass" // a OnePass rule's single epoch
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
	// Tolerance stops training once the loss changes by less than
	// Tolerance·max(1, previous loss) in an epoch; 0 means 1e-9.
	Tolerance float64
	// Seed seeds the order in which each online epoch visits the patterns.
	Seed uint64
	// Batch applies the mean update once per epoch instead of one update
	// per pattern (full-batch gradient descent, whose fixed point for
	// linear units is the least-squares solution).
	Batch bool
	// KeepGoing trains on after a training epoch with zero errors.
	KeepGoing bool
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
	Stop      string // StopZeroErrors, StopConverged or StopEpochs
}

// Train fits a network to patterns p with class labels classes[i] in
// [0, numClasses), numClasses ≥ 2. It neither modifies p nor classes.
func Train(p Patterns, classes []int, numClasses int, opts Options) (*Result, error) {
	t, err := newTrainer(p, classes, numClasses, opts)
	if err != nil {
		return nil, err
	}
	return t.run()
}

// trainer holds one run's state and every buffer it needs, so that an
// epoch allocates nothing but the goroutines of a parallel measurement.
type trainer struct {
	patterns Patterns
	n        int // patterns
	classes  []int
	rule     Rule
	opts     Options
	onePass  bool // the rule is OnePass: one epoch
	result   Result

	net     *Network
	weights []float64 // units × Width, the storage of net.Weights
	biases  []float64 // net.Biases

	order []int // online visiting order
	pcg   *rand.PCG
	rng   *rand.Rand

	sumWeights []float64 // batch accumulators, units × Width
	sumBiases  []float64
	outputs    []float64

	chunkStats   []EpochStats // per measurement chunk
	chunkOutputs [][]float64  // per measuring goroutine
}

func newTrainer(p Patterns, classes []int, numClasses int, opts Options) (*trainer, error) {
	if numClasses < 2 {
		return nil, fmt.Errorf("fit: %d classes, want at least 2", numClasses)
	}
	n := len(classes)
	if n == 0 {
		return nil, errors.New("fit: no patterns")
	}
	if err := p.check(n); err != nil {
		return nil, err
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

	p.Rows = n
	rate, lambdaMax, traceR, err := autoRate(p, opts.Batch)
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

	units, width := unitCount(numClasses), p.Width
	t := &trainer{
		patterns: p,
		n:        n,
		classes:  classes,
		rule:     opts.Rule,
		opts:     opts,
		onePass:  onePass,
		result:   Result{Rate: rate, RateAuto: auto, LambdaMax: lambdaMax, TraceR: traceR},
		weights:  make([]float64, units*width),
		biases:   make([]float64, units),
		outputs:  make([]float64, units),

		chunkStats: make([]EpochStats, (n+measureChunk-1)/measureChunk),
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
	for range min(runtime.GOMAXPROCS(0), len(t.chunkStats)) {
		t.chunkOutputs = append(t.chunkOutputs, make([]float64, units))
	}
	if opts.Batch || onePass {
		t.sumWeights = make([]float64, units*width)
		t.sumBiases = make([]float64, units)
	} else {
		t.order = make([]int, n)
		t.pcg = rand.NewPCG(opts.Seed, 0)
		t.rng = rand.New(t.pcg)
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
	return nil
}

func (t *trainer) run() (*Result, error) {
	previous := math.NaN()
	for epoch := 1; epoch <= t.opts.Epochs; epoch++ {
		stats := t.epoch(epoch)
		t.result.History = append(t.result.History, stats)
		if !t.weightsFinite() || !finite(stats.Loss) || stats.Loss > divergedLoss {
			return nil, fmt.Errorf("%w at epoch %d (rate %.4g, stable below 2/λmax = %.4g)",
				ErrDiverged, epoch, t.result.Rate, 2/t.result.LambdaMax)
		}
		switch {
		case t.onePass:
			t.result.Stop = StopOnePass
		case stats.Errors == 0 && !t.opts.KeepGoing:
			t.result.Stop = StopZeroErrors
		case epoch > 1 && math.Abs(stats.Loss-previous) < t.opts.Tolerance*math.Max(1, previous):
			t.result.Stop = StopConverged
		case epoch == t.opts.Epochs:
			t.result.Stop = StopEpochs
		}
		if t.result.Stop != "" {
			break
		}
		previous = stats.Loss
	}
	t.result.Network = t.net
	return &t.result, nil
}

// epoch trains one epoch and measures the weights it ends with.
func (t *trainer) epoch(epoch int) EpochStats {
	switch {
	case t.onePass:
		t.onePassEpoch()
	case t.opts.Batch:
		t.batchEpoch()
	default:
		t.onlineEpoch(epoch)
	}
	return t.measure(epoch)
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

// onlineEpoch updates the weights after each pattern, visiting them in an
// order drawn from a PCG seeded by (Seed, epoch).
func (t *trainer) onlineEpoch(epoch int) {
	t.shuffle(epoch)
	rate, width := t.result.Rate, t.patterns.Width
	for _, i := range t.order {
		x, c := t.patterns.Row(i), t.classes[i]
		for j := range t.biases {
			weights := t.weights[j*width : (j+1)*width]
			output := t.net.Unit.activate(dot(weights, x) + t.biases[j])
			step := rate * t.rule.Signal(t.target(j, c), output)
			if step != 0 {
				axpy(step, x, weights)
				t.biases[j] += step
			}
		}
	}
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
func (t *trainer) batchEpoch() {
	t.sumUpdates()
	step := t.result.Rate / float64(t.n)
	axpy(step, t.sumWeights, t.weights)
	axpy(step, t.sumBiases, t.biases)
}

// onePassEpoch applies rate times the summed updates of a OnePass rule.
// Summing before scaling keeps equal sums equal (for 0/1 inputs the sums
// are whole numbers, exact in float64), so ties between classes stay ties
// whatever the rate and the order of the rows.
func (t *trainer) onePassEpoch() {
	t.sumUpdates()
	axpy(t.result.Rate, t.sumWeights, t.weights)
	axpy(t.result.Rate, t.sumBiases, t.biases)
}

// sumUpdates sums each pattern's update, without the rate, computed with
// the weights the epoch starts with.
func (t *trainer) sumUpdates() {
	clear(t.sumWeights)
	clear(t.sumBiases)
	width := t.patterns.Width
	for i, c := range t.classes {
		x := t.patterns.Row(i)
		for j := range t.biases {
			output := t.net.Unit.activate(dot(t.weights[j*width:(j+1)*width], x) + t.biases[j])
			signal := t.rule.Signal(t.target(j, c), output)
			axpy(signal, x, t.sumWeights[j*width:(j+1)*width])
			t.sumBiases[j] += signal
		}
	}
}

// measure returns the loss and the error count with the current weights.
//
// The rows are measured in chunks of measureChunk, whose sums are added in
// chunk order, so the result is the same however many goroutines measure:
// one per core (up to the number of chunks) when there is more than one
// chunk and more than one core.
func (t *trainer) measure(epoch int) EpochStats {
	chunks := (t.n + measureChunk - 1) / measureChunk
	workers := min(runtime.GOMAXPROCS(0), chunks, len(t.chunkOutputs))
	if workers <= 1 {
		for k := range chunks {
			t.chunkStats[k] = t.measureChunk(k, t.outputs)
		}
	} else {
		var next atomic.Int64
		var wg sync.WaitGroup
		for w := range workers {
			wg.Add(1)
			go func(outputs []float64) {
				defer wg.Done()
				for k := int(next.Add(1) - 1); k < chunks; k = int(next.Add(1) - 1) {
					t.chunkStats[k] = t.measureChunk(k, outputs)
				}
			}(t.chunkOutputs[w])
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
// chunk k, using outputs as its scratch buffer.
func (t *trainer) measureChunk(k int, outputs []float64) EpochStats {
	var stats EpochStats
	for i := k * measureChunk; i < min((k+1)*measureChunk, t.n); i++ {
		c := t.classes[i]
		if t.net.classify(t.patterns.Row(i), outputs) != c {
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
