package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"
)

// ErrDiverged is returned, wrapped with the epoch, the rate and the
// stability bound the rate crossed, when the weights or the loss stop
// being finite or the loss passes 1e12.
var ErrDiverged = errors.New("fit: weights diverged")

// Defaults of Options.
const (
	DefaultEpochs = 200
	// DefaultTolerance and DefaultPatience are the default stop rule's:
	// training ends once the best loss has fallen by no more than 1e-6 of
	// itself over 10 epochs (Plateau).
	DefaultTolerance = 1e-6
	DefaultPatience  = 10
	// DefaultL2 is the weight decay deltafit fit applies unless told
	// otherwise (Options.L2 itself defaults to none). A light penalty on
	// units of unit scale, it steadies the weights of wide encodings from
	// one training sample to the next: on an open table of 5,000 rows
	// encoded in 220 units it halves the spread of cross-validated accuracy
	// over seeds (README, "The default against base R's linear model"),
	// for a mean accuracy 0.0006 lower.
	DefaultL2 = 1e-3
	// divergedLoss is the loss past which a run counts as diverged.
	divergedLoss = 1e12
)

// DefaultStop returns the stop rules Train asks when o.Stop is nil:
// ZeroErrors unless o.KeepGoing, then Plateau with o's Tolerance and
// Patience (DefaultTolerance and DefaultPatience for 0), on the held-out
// loss when o holds patterns out.
func DefaultStop(o Options) []Converger {
	tolerance, patience := o.Tolerance, o.Patience
	if tolerance == 0 {
		tolerance = DefaultTolerance
	}
	if patience == 0 {
		patience = DefaultPatience
	}
	var rules []Converger
	if !o.KeepGoing {
		rules = append(rules, ZeroErrors{})
	}
	return append(rules, Plateau{Tolerance: tolerance, Patience: patience, Holdout: o.Holdout > 0})
}

// Stop reasons of a Result. A Converger of Options.Stop may give others.
const (
	StopZeroErrors = "zero-errors"    // ZeroErrors
	StopConverged  = "converged"      // Plateau on the training loss
	StopEarly      = "early-stopping" // Plateau on the held-out loss
	StopEpochs     = "epochs"         // Options.Epochs reached
	StopOnePass    = "one-pass"       // a OnePass rule's single epoch
)

// Options control Train. The zero value trains logistic units with the
// delta rule online at the automatic rate, returning averaged weights.
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
	// Decay lowers the rate epoch by epoch: epoch e (from 1) trains at
	// Rate/(1 + Decay·(e−1)), a 1/t schedule (Robbins & Monro 1951; Bottou
	// 2012). 0, the default, keeps the rate constant.
	Decay float64
	// L2 is the weight decay λ ≥ 0 (Krogh & Hertz 1992): every update
	// first shrinks the weights, not the biases, by the factor 1 − rate·λ,
	// so training minimizes the mean squared error plus λ/2·‖w‖².
	L2 float64
	// Seed seeds the order in which each online epoch visits the patterns,
	// and the choice of the held-out patterns.
	Seed uint64
	// Batch applies the mean update once per epoch instead of one update
	// per pattern (full-batch gradient descent, whose fixed point for
	// linear units is the least-squares solution). Batch weights are not
	// averaged.
	Batch bool
	// LastIterate makes an online run return the weights after its last
	// update instead of their average over the last epochs (see the
	// package documentation, "Averaged weights").
	LastIterate bool
	// Holdout, in [0, 1), is the fraction of the patterns held out of
	// training to stop it early (Prechelt 1998): that fraction of each
	// class, rounded, at least one pattern in all and at least one of each
	// class left to train on, chosen by a PCG seeded with (Seed, 0). The
	// default stop rule then watches their loss (StopEarly), and the
	// weights returned are those of the epoch with the lowest held-out
	// loss. 0, the default, trains on every pattern.
	Holdout float64
	// Tolerance and Patience set the default stop rule, Plateau: training
	// ends once the best loss (the held-out loss with a Holdout) has
	// fallen by no more than Tolerance of itself over Patience epochs. 0
	// means DefaultTolerance and DefaultPatience. Neither is used when
	// Stop is set.
	Tolerance float64
	Patience  int
	// KeepGoing trains on after a training epoch with zero errors: it
	// leaves ZeroErrors out of the default stop rules. It is not used when
	// Stop is set.
	KeepGoing bool

	// Stop are the rules that may end training early, asked in order
	// after each epoch; the first to give a reason ends it. nil means
	// DefaultStop(o): ZeroErrors{} (unless KeepGoing), then
	// Plateau{Tolerance, Patience, Holdout > 0}. Besides them, training always ends after Epochs epochs
	// (StopEpochs) and after the single epoch of a OnePass rule
	// (StopOnePass, before any rule is asked).
	Stop []Converger
	// Recorder, if not nil, is told of every epoch, and of every update
	// when it is an UpdateRecorder.
	Recorder Recorder
	// Warn, if not nil, is called before the first epoch with each warning
	// about the options on these patterns, a sentence without the package
	// name: a fixed Rate at or above the stability bound that applies
	// (Result.Bound). It is called from the goroutine that called Train.
	Warn func(message string)
	// Workers is the most goroutines that measure an epoch; 0 means
	// runtime.GOMAXPROCS(0), read once when Train starts. Results do not
	// depend on it. A negative count is an error.
	Workers int
	// Block, when above 0, makes online epochs visit the patterns
	// block-shuffled instead of in one full permutation: the patterns are
	// cut into blocks of Block consecutive rows (the last may be
	// shorter), each epoch visits the blocks in an order drawn from its
	// PCG and the rows of each block in a permutation drawn next from the
	// same PCG. A store read from disk block by block (DiskStore) then
	// reads each block once per epoch, and the order holds Block rows,
	// not one per pattern. 0, the default, is the full shuffle; so is a
	// Block of at least the number of patterns, to the bit. A negative
	// Block is an error.
	Block int
}

// EpochStats are measured after an epoch with the weights it ends with:
// the averaged weights when the run averages.
type EpochStats struct {
	Epoch  int     `json:"epoch"`  // from 1
	Loss   float64 `json:"loss"`   // mean over patterns and units of (t − y)²
	Errors int     `json:"errors"` // patterns whose class is not the one Classify gives
	// Holdout is measured on the held-out patterns (Options.Holdout); it
	// is the zero value, and not written, without them.
	Holdout HoldoutStats `json:"holdout,omitzero"`
	// BestLoss is the lowest Loss of the run up to this epoch, and
	// BestHoldoutLoss the lowest Holdout.Loss: what Plateau compares. Train
	// fills them in; they are not written.
	BestLoss        float64 `json:"-"`
	BestHoldoutLoss float64 `json:"-"`
}

// HoldoutStats are an epoch's measurements on the held-out patterns.
type HoldoutStats struct {
	Rows   int     `json:"rows"`
	Loss   float64 `json:"loss"`
	Errors int     `json:"errors"`
}

// Result is the outcome of Train.
type Result struct {
	Network  *Network
	Rate     float64 // the rate used (of the first epoch, with Decay)
	RateAuto bool    // whether Rate was chosen automatically
	// The spectrum of the training patterns (see Spectrum): λmax and the
	// trace of R = mean of x̃x̃ᵀ, x̃ = [x, 1], and the largest ‖x̃‖².
	LambdaMax float64
	TraceR    float64
	RowMax    float64
	// Bound is the stability bound the rate is held to, named by
	// BoundName: BoundEveryRow (online), BoundMean (batch) or BoundNone
	// (OnePass, Bound 0), and written as a formula by BoundFormula, such
	// as "2/max‖x̃‖²" or "2/(λmax + l2)" ("" for BoundNone). See
	// Spectrum.Bound.
	Bound        float64
	BoundName    string
	BoundFormula string
	History      []EpochStats
	// Epoch is the epoch whose weights Network holds: the last one, or
	// with a holdout the one with the lowest held-out loss.
	Epoch int
	// AverageFrom is the first epoch of the updates whose weights Network
	// averages, through Epoch; 0 when Network holds the weights of a
	// single moment (batch, OnePass, LastIterate).
	AverageFrom int
	// HoldoutRows is the number of held-out patterns, 0 without.
	HoldoutRows int
	// Stop is why training ended: StopOnePass, StopEpochs or the reason
	// of the stop rule that ended it (by default StopZeroErrors,
	// StopConverged or StopEarly). StopRule says it in words: the
	// String of that rule when it has one, else its reason.
	Stop     string
	StopRule string
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
	t, err := newTrainer(ctx, p, labels{ints: classes}, numClasses, opts)
	if err != nil {
		return nil, err
	}
	return t.run(ctx)
}

// TrainBytesContext is TrainContext with the class labels held in one
// byte each, so that the labels of more patterns than memory holds as
// []int (a DiskStore's, DiskStore.Classes) cost one byte a row; classes
// must be below 256. The results are those of TrainContext on the same
// labels as []int. Options.Holdout is refused: the held-out split keeps
// lists of rows.
func TrainBytesContext(ctx context.Context, p Store, classes []uint8, numClasses int, opts Options) (*Result, error) {
	if opts.Holdout > 0 {
		return nil, errors.New("fit: a holdout is not offered with byte labels")
	}
	if classes == nil {
		classes = []uint8{}
	}
	t, err := newTrainer(ctx, p, labels{bytes: classes}, numClasses, opts)
	if err != nil {
		return nil, err
	}
	return t.run(ctx)
}

// ctxRows is how many patterns a pass goes through between looks at its
// context: often enough to stop promptly, rarely enough to cost nothing.
const ctxRows = 4096

// sample is a set of patterns with their classes as training reads them:
// the patterns trained on, or the held-out ones.
type sample struct {
	store   Store
	kernels RowKernels // the store's fast path, or nil
	classes labels
	// rows are the indices in the caller's store of the patterns of a
	// view; nil when store is the caller's.
	rows []int
}

func newSample(s Store, classes labels, rows []int) sample {
	k, _ := s.(RowKernels)
	return sample{store: s, kernels: k, classes: classes, rows: rows}
}

// labels are the class labels of the patterns: an []int, or one byte
// each (TrainBytesContext).
type labels struct {
	ints  []int
	bytes []uint8
}

func (l labels) len() int {
	if l.bytes != nil {
		return len(l.bytes)
	}
	return len(l.ints)
}

// at returns the class of pattern i.
func (l labels) at(i int) int {
	if l.bytes != nil {
		return int(l.bytes[i])
	}
	return l.ints[i]
}

// callerRow returns the index in the caller's store of pattern i.
func (s *sample) callerRow(i int) int {
	if s.rows == nil {
		return i
	}
	return s.rows[i]
}

// layer holds the weights (units × width, row-major) and biases of the
// output units.
type layer struct {
	weights []float64
	biases  []float64
	width   int
}

func newLayer(units, width int) layer {
	return layer{weights: make([]float64, units*width), biases: make([]float64, units), width: width}
}

// unit returns unit j's weights.
func (l layer) unit(j int) []float64 {
	return l.weights[j*l.width : (j+1)*l.width : (j+1)*l.width]
}

func (l layer) copyFrom(src layer) {
	copy(l.weights, src.weights)
	copy(l.biases, src.biases)
}

func (l layer) clear() {
	clear(l.weights)
	clear(l.biases)
}

func (l layer) finite() bool {
	for _, w := range l.weights {
		if !finite(w) {
			return false
		}
	}
	for _, b := range l.biases {
		if !finite(b) {
			return false
		}
	}
	return true
}

// trainer holds one run's state and every buffer it needs, so that an
// epoch allocates nothing but the goroutines of a parallel measurement.
type trainer struct {
	train   sample  // the patterns trained on
	holdout *sample // the held-out patterns, or nil
	row     []float64
	rule    Rule
	opts    Options
	onePass bool // the rule is OnePass: one epoch
	result  Result

	net     *Network
	current layer // the weights the updates change; Network's storage
	// Averaging (online, not LastIterate): sums of the weights after every
	// update of the epochs since the last power of two (cur) and of the
	// epochs of the power-of-two block before (prev), and their mean.
	averaging           bool
	sumCur, sumPrev     layer
	countCur, countPrev int
	average             layer
	averageFrom         int // first epoch of average

	best            layer // with a holdout: the kept weights of the best epoch
	bestAverageFrom int

	order   []int  // online visiting order: of all patterns, or of a block
	blocks  []int  // with Options.Block: the order of the blocks
	touched uint64 // what touching rows ahead read (see rowToucher), unused
	pcg     *rand.PCG
	rng     *rand.Rand

	sums    layer     // batch and one-pass accumulators
	outputs []float64 // per unit: net inputs, then outputs
	steps   []float64 // per unit: a pattern's steps (online) or signals (batch)

	updates UpdateRecorder // Recorder, when it records updates
	update  Update         // handed to updates, its slices reused

	chunkStats   []EpochStats // per measurement chunk
	chunkOutputs [][]float64  // per measuring goroutine
	chunkRows    [][]float64  // per measuring goroutine: scratch rows
}

func newTrainer(ctx context.Context, p Store, classes labels, numClasses int, opts Options) (*trainer, error) {
	if numClasses < 2 {
		return nil, fmt.Errorf("fit: %d classes, want at least 2", numClasses)
	}
	n := classes.len()
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
	for i := range n {
		if c := classes.at(i); c < 0 || c >= numClasses {
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
	onePass := isOnePass(opts.Rule)
	if onePass {
		// One pass of updates that ignore the weights: nothing to decay,
		// average or stop early.
		opts.Epochs, opts.Decay, opts.L2, opts.Holdout = 1, 0, 0, 0
	}

	t := &trainer{rule: opts.Rule, opts: opts, onePass: onePass, train: newSample(p, classes, nil)}
	if opts.Holdout > 0 {
		trainRows, heldRows, err := holdoutSplit(classes.ints, numClasses, opts.Holdout, opts.Seed)
		if err != nil {
			return nil, err
		}
		t.train = newSample(Subset(p, trainRows), labels{ints: pick(classes.ints, trainRows)}, trainRows)
		t.holdout = &sample{}
		*t.holdout = newSample(Subset(p, heldRows), labels{ints: pick(classes.ints, heldRows)}, heldRows)
		t.result.HoldoutRows = len(heldRows)
	}

	spec, err := spectrum(ctx, t.train.store)
	if err != nil {
		return nil, err
	}
	auto := opts.Rate == 0
	rate := opts.Rate
	if auto {
		rate = spec.AutoRate(opts, t.train.classes.len())
	}
	bound, boundName := spec.Bound(opts)
	t.result.Rate, t.result.RateAuto = rate, auto
	t.result.LambdaMax, t.result.TraceR, t.result.RowMax = spec.LambdaMax, spec.TraceR, spec.RowMax
	t.result.Bound, t.result.BoundName = bound, boundName
	if boundName != BoundNone {
		t.result.BoundFormula = boundText(boundName, opts.L2)
	}
	if opts.Warn != nil && !auto && boundName != BoundNone && rate >= bound {
		opts.Warn(fmt.Sprintf("rate %.4g is at or above %s; training may diverge", rate, t.crossed(rate)))
	}

	units, width := unitCount(numClasses), p.Inputs()
	t.current = newLayer(units, width)
	t.outputs = make([]float64, units)
	t.steps = make([]float64, units)
	chunks := (t.train.classes.len() + measureChunk - 1) / measureChunk
	if t.holdout != nil {
		chunks = max(chunks, (t.holdout.classes.len()+measureChunk-1)/measureChunk)
	}
	t.chunkStats = make([]EpochStats, chunks)
	if t.train.kernels == nil {
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
		Biases:  t.current.biases,
	}
	for j := range units {
		t.net.Weights[j] = t.current.unit(j)
	}
	for range min(opts.Workers, chunks) {
		t.chunkOutputs = append(t.chunkOutputs, make([]float64, units))
		var row []float64
		if t.train.kernels == nil || (t.holdout != nil && t.holdout.kernels == nil) {
			row = make([]float64, width)
		}
		t.chunkRows = append(t.chunkRows, row)
	}
	if opts.Batch || onePass {
		t.sums = newLayer(units, width)
	} else {
		// With a Block the order holds one block, not one row per pattern.
		size := t.train.classes.len()
		if opts.Block > 0 {
			size = min(size, opts.Block)
		}
		t.order = make([]int, size)
		t.pcg = rand.NewPCG(opts.Seed, 0)
		t.rng = rand.New(t.pcg)
		if !opts.LastIterate {
			t.averaging = true
			t.sumCur, t.sumPrev, t.average = newLayer(units, width), newLayer(units, width), newLayer(units, width)
		}
	}
	if t.holdout != nil {
		t.best = newLayer(units, width)
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

// holdoutSplit divides the patterns of the given classes into those
// trained on and those held out, both ascending: per class, a fraction
// of its patterns rounded to the nearest count, chosen by a PCG seeded
// with (seed, 0) (the epochs' orders use the streams from 1), keeping at
// least one pattern of each class to train on.
func holdoutSplit(classes []int, numClasses int, fraction float64, seed uint64) (trainRows, heldRows []int, err error) {
	byClass := make([][]int, numClasses)
	for i, c := range classes {
		byClass[c] = append(byClass[c], i)
	}
	rng := rand.New(rand.NewPCG(seed, 0))
	for _, rows := range byClass {
		held := min(int(math.Round(fraction*float64(len(rows)))), max(len(rows)-1, 0))
		rng.Shuffle(len(rows), func(i, j int) { rows[i], rows[j] = rows[j], rows[i] })
		heldRows = append(heldRows, rows[:held]...)
		trainRows = append(trainRows, rows[held:]...)
	}
	if len(heldRows) == 0 {
		return nil, nil, fmt.Errorf("fit: a holdout of %v of %d patterns holds out none: give a larger fraction, or none", fraction, len(classes))
	}
	slices.Sort(trainRows)
	slices.Sort(heldRows)
	return trainRows, heldRows, nil
}

// pick returns the classes of the given rows.
func pick(classes, rows []int) []int {
	out := make([]int, len(rows))
	for i, r := range rows {
		out[i] = classes[r]
	}
	return out
}

// setDefaults fills in the defaults of o and checks what is left.
func (o *Options) setDefaults() error {
	if o.Rule == nil {
		o.Rule = Delta{}
	}
	nonNegative := func(name string, v float64) error {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return fmt.Errorf("fit: %s %v: want a finite value ≥ 0", name, v)
		}
		return nil
	}
	switch {
	case o.Epochs < 0:
		return fmt.Errorf("fit: negative epoch count %d", o.Epochs)
	case o.Epochs == 0:
		o.Epochs = DefaultEpochs
	}
	if math.IsNaN(o.Rate) || math.IsInf(o.Rate, 0) || o.Rate < 0 {
		return fmt.Errorf("fit: learning rate %v: want a finite rate ≥ 0 (0 is automatic)", o.Rate)
	}
	for _, v := range []struct {
		name  string
		value float64
	}{{"tolerance", o.Tolerance}, {"decay", o.Decay}, {"weight decay (L2)", o.L2}} {
		if err := nonNegative(v.name, v.value); err != nil {
			return err
		}
	}
	if o.Tolerance == 0 {
		o.Tolerance = DefaultTolerance
	}
	if !(o.Holdout >= 0 && o.Holdout < 1) {
		return fmt.Errorf("fit: holdout fraction %v: want at least 0 and below 1", o.Holdout)
	}
	switch {
	case o.Patience < 0:
		return fmt.Errorf("fit: negative patience %d", o.Patience)
	case o.Patience == 0:
		o.Patience = DefaultPatience
	}
	switch {
	case o.Workers < 0:
		return fmt.Errorf("fit: negative worker count %d", o.Workers)
	case o.Workers == 0:
		o.Workers = runtime.GOMAXPROCS(0)
	}
	if o.Block < 0 {
		return fmt.Errorf("fit: negative block size %d", o.Block)
	}
	if o.Stop == nil {
		o.Stop = DefaultStop(*o)
	}
	for k, rule := range o.Stop {
		if rule == nil {
			return fmt.Errorf("fit: stop rule %d is nil", k)
		}
	}
	return nil
}

// boundText names a stability bound as a formula, with the weight decay
// when there is one.
func boundText(name string, l2 float64) string {
	size := "λmax"
	if name == BoundEveryRow {
		size = "max‖x̃‖²"
	}
	if l2 == 0 {
		return "2/" + size
	}
	return fmt.Sprintf("2/(%s + l2)", size)
}

// crossed names the largest stability bound that rate is at or above,
// with its value and what it guarantees: the mean bound 2/(λmax + l2)
// (Widrow & Stearns 1985), or, online, the every-row bound
// 2/(max‖x̃‖² + l2) (Nagumo & Noda 1967). It names the bound of the mode
// when rate is below both.
func (t *trainer) crossed(rate float64) string {
	l2 := t.opts.L2
	mean := 2 / (t.result.LambdaMax + l2)
	name, bound := t.result.BoundName, t.result.Bound
	if rate >= mean {
		name, bound = BoundMean, mean
	}
	what := "the bound for a stable update on every row"
	if name == BoundMean {
		what = "the bound for convergence in the mean"
	}
	return fmt.Sprintf("%s = %.4g, %s", boundText(name, l2), bound, what)
}

// divergence returns the error of a run that diverged in epoch.
func (t *trainer) divergence(epoch int) error {
	rate := t.epochRate(epoch)
	if t.result.BoundName == BoundNone {
		return fmt.Errorf("%w at epoch %d (rate %.4g; no stability bound applies to a one-pass rule)", ErrDiverged, epoch, rate)
	}
	relation := "is at or above"
	if rate < t.result.Bound && rate < 2/(t.result.LambdaMax+t.opts.L2) {
		relation = "is below"
	}
	return fmt.Errorf("%w at epoch %d (rate %.4g %s %s)", ErrDiverged, epoch, rate, relation, t.crossed(rate))
}

// epochRate returns the rate of epoch (from 1), lowered by Decay.
func (t *trainer) epochRate(epoch int) float64 {
	if t.opts.Decay == 0 {
		return t.result.Rate
	}
	return t.result.Rate / (1 + t.opts.Decay*float64(epoch-1))
}

func (t *trainer) run(ctx context.Context) (*Result, error) {
	for epoch := 1; epoch <= t.opts.Epochs; epoch++ {
		stats, err := t.epoch(ctx, epoch)
		if err != nil {
			return nil, err
		}
		t.track(&stats)
		t.result.History = append(t.result.History, stats)
		if t.opts.Recorder != nil {
			if err := t.opts.Recorder.RecordEpoch(stats); err != nil {
				return nil, fmt.Errorf("fit: recorder at epoch %d: %w", epoch, err)
			}
		}
		if !t.current.finite() || (t.averaging && !t.average.finite()) || !finite(stats.Loss) || stats.Loss > divergedLoss {
			return nil, t.divergence(epoch)
		}
		if t.result.Stop, t.result.StopRule = t.stopReason(); t.result.Stop != "" {
			break
		}
	}
	t.keep()
	t.result.Network = t.net
	return &t.result, nil
}

// TrackBest sets the best losses of s, the epoch after history, from its
// own losses and the last epoch's best ones. The Plateau stop rule reads
// them, so a trainer other than Train calls it before asking StopReason.
func (s *EpochStats) TrackBest(history []EpochStats) {
	s.BestLoss, s.BestHoldoutLoss = s.Loss, s.Holdout.Loss
	if n := len(history); n > 0 {
		s.BestLoss = min(s.BestLoss, history[n-1].BestLoss)
		s.BestHoldoutLoss = min(s.BestHoldoutLoss, history[n-1].BestHoldoutLoss)
	}
}

// track fills in the best losses of stats, the last epoch's, and with a
// holdout keeps the weights of an epoch with a lower held-out loss than
// any before.
func (t *trainer) track(stats *EpochStats) {
	stats.TrackBest(t.result.History)
	if t.holdout != nil && (t.result.Epoch == 0 || stats.Holdout.Loss < t.result.History[t.result.Epoch-1].Holdout.Loss) {
		t.best.copyFrom(t.kept())
		t.result.Epoch, t.bestAverageFrom = stats.Epoch, t.averageFrom
	}
}

// kept returns the weights the run would return now: the average when it
// averages, else the current weights.
func (t *trainer) kept() layer {
	if t.averaging {
		return t.average
	}
	return t.current
}

// keep puts the weights the run returns into the network's storage.
func (t *trainer) keep() {
	switch {
	case t.holdout != nil:
		t.current.copyFrom(t.best)
		if t.averaging {
			t.result.AverageFrom = t.bestAverageFrom
		}
	case t.averaging:
		t.current.copyFrom(t.average)
		t.result.AverageFrom = t.averageFrom
		t.result.Epoch = len(t.result.History)
	default:
		t.result.Epoch = len(t.result.History)
	}
}

// stopReason returns why training ends after the last epoch of the
// history and the rule's words, or "" to go on.
func (t *trainer) stopReason() (reason, rule string) {
	if t.onePass {
		return StopOnePass, "one pass of a rule whose update ignores the weights"
	}
	return StopReason(t.opts.Stop, t.result.History, t.opts.Epochs)
}

// StopReason returns why a run whose measured epochs are history ends
// there, or "" when it goes on: the first of rules that says so, then the
// limit of epochs. rule describes the rule that stopped it. Trainers other
// than Train (a pipeline run) ask it after each epoch, as Train does.
func StopReason(rules []Converger, history []EpochStats, epochs int) (reason, rule string) {
	for _, c := range rules {
		if reason := c.Converged(history); reason != "" {
			if s, ok := c.(fmt.Stringer); ok {
				return reason, s.String()
			}
			return reason, reason
		}
	}
	if len(history) == epochs {
		return StopEpochs, fmt.Sprintf("the limit of %d epochs", epochs)
	}
	return "", ""
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
	if t.averaging {
		t.averageThrough(epoch)
	}
	stats := EpochStats{Epoch: epoch}
	stats.Loss, stats.Errors = t.measure(ctx, &t.train, t.kept())
	if t.holdout != nil {
		stats.Holdout.Rows = t.holdout.classes.len()
		stats.Holdout.Loss, stats.Holdout.Errors = t.measure(ctx, t.holdout, t.kept())
	}
	return stats, stopped(ctx, epoch)
}

// averageThrough closes epoch for averaging: its updates' weights are in
// sumCur. After an epoch that is a power of two, 2^k, the block of epochs
// (2^(k−1), 2^k] becomes the previous block and a new block starts, so
// the average after epoch e ≥ 2 is over the epochs (2^(⌊log₂ e⌋−1), e]:
// at least the last half of the epochs run and at most the last three
// quarters.
func (t *trainer) averageThrough(epoch int) {
	t.countCur += t.train.classes.len()
	if epoch&(epoch-1) == 0 {
		t.sumPrev, t.sumCur = t.sumCur, t.sumPrev
		t.countPrev, t.countCur = t.countCur, 0
		t.sumCur.clear()
		t.averageFrom = epoch/2 + 1
	}
	inverse := 1 / float64(t.countPrev+t.countCur)
	for i, w := range t.sumPrev.weights {
		t.average.weights[i] = (w + t.sumCur.weights[i]) * inverse
	}
	for j, b := range t.sumPrev.biases {
		t.average.biases[j] = (b + t.sumCur.biases[j]) * inverse
	}
}

// target returns unit j's target for a pattern of class c.
func (t *trainer) target(j, c int) float64 {
	member := c == j
	if len(t.current.biases) == 1 {
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
func (s *sample) rowOf(i int, buf []float64) []float64 {
	if s.kernels != nil {
		return nil
	}
	return s.store.RowTo(buf, i)
}

// netInputsTo stores the net input w_j·x + b_j of every unit j of l for
// pattern i, whose row is x, in dst.
func (s *sample) netInputsTo(dst []float64, l layer, i int, x []float64) {
	if s.kernels != nil {
		for j := range dst {
			dst[j] = s.kernels.DotRow(i, l.unit(j)) + l.biases[j]
		}
		return
	}
	for j := range dst {
		dst[j] = dot(l.unit(j), x) + l.biases[j]
	}
}

// addRowTo adds steps[j] times pattern i, whose row is x, to unit j's
// weights of l for every unit j; with skipZero, a zero step is not added.
func (s *sample) addRowTo(l layer, steps []float64, i int, x []float64, skipZero bool) {
	for j, step := range steps {
		if skipZero && step == 0 {
			continue
		}
		if s.kernels != nil {
			s.kernels.AxpyRow(step, i, l.unit(j))
		} else {
			axpy(step, x, l.unit(j))
		}
	}
}

// onlineEpoch updates the weights after each pattern, visiting them in an
// order drawn from a PCG seeded by (Seed, epoch): one permutation of all
// of them, or with Options.Block one of the blocks and one of the rows of
// each block in turn. With L2 each update first shrinks the weights; when
// averaging, the weights after each update are added to sumCur.
func (t *trainer) onlineEpoch(ctx context.Context, epoch int) error {
	n := t.train.classes.len()
	t.pcg.Seed(t.opts.Seed, uint64(epoch))
	if len(t.order) == n {
		t.shuffle(0, n)
		return t.trainOrder(ctx, epoch, 0)
	}
	blocks := (n + len(t.order) - 1) / len(t.order)
	if cap(t.blocks) < blocks {
		t.blocks = make([]int, blocks)
	}
	t.blocks = t.blocks[:blocks]
	for b := range t.blocks {
		t.blocks[b] = b
	}
	t.rng.Shuffle(blocks, func(i, j int) { t.blocks[i], t.blocks[j] = t.blocks[j], t.blocks[i] })
	size := len(t.order)
	defer func() { t.order = t.order[:size] }()
	for k, b := range t.blocks {
		t.order = t.order[:size]
		t.shuffle(b*size, min((b+1)*size, n))
		if err := t.trainOrder(ctx, epoch, k*size); err != nil {
			return err
		}
	}
	return nil
}

// trainOrder trains on the patterns of t.order, the first of which is
// the done-th pattern of the epoch.
func (t *trainer) trainOrder(ctx context.Context, epoch, done int) error {
	rate := t.epochRate(epoch)
	shrink := 1 - rate*t.opts.L2
	s := &t.train
	_, touching := s.store.(rowToucher)
	for k, i := range t.order {
		if (done+k)%ctxRows == ctxRows-1 {
			if err := stopped(ctx, epoch); err != nil {
				return err
			}
		}
		if touching && k%touchBlock == 0 {
			t.touchAhead(k)
		}
		x, c := s.rowOf(i, t.row), s.classes.at(i)
		s.netInputsTo(t.outputs, t.current, i, x)
		for j, z := range t.outputs {
			target := t.target(j, c)
			output := t.net.Unit.activate(z)
			t.steps[j] = rate * t.rule.Signal(target, output)
			if t.updates != nil {
				t.update.Targets[j], t.update.Outputs[j], t.update.Steps[j] = target, output, t.steps[j]
			}
		}
		switch {
		case t.opts.L2 != 0 && t.averaging && x != nil:
			// One pass over each unit's weights where there would be three;
			// the same operations in the same order, so the same bits.
			for j, step := range t.steps {
				shrinkAxpyAdd(shrink, step, x, t.current.unit(j), t.sumCur.unit(j))
			}
		case t.opts.L2 != 0:
			scale(shrink, t.current.weights)
			s.addRowTo(t.current, t.steps, i, x, true)
		default:
			s.addRowTo(t.current, t.steps, i, x, true)
		}
		for j, step := range t.steps {
			if step != 0 {
				t.current.biases[j] += step
			}
		}
		if t.averaging {
			if t.opts.L2 == 0 || x == nil {
				add(t.current.weights, t.sumCur.weights)
			}
			add(t.current.biases, t.sumCur.biases)
		}
		if t.updates != nil {
			t.recordUpdate(epoch, i)
		}
	}
	return nil
}

// touchBlock is the rows an online epoch touches at a time, a block
// ahead of the one it trains on: 64 dense rows of 64 inputs are 32 KiB.
const touchBlock = 64

// touchAhead touches the rows of the visiting order in the block after
// the one starting at position k (and that block too when k is 0), so
// that their loads are under way before they are trained on.
func (t *trainer) touchAhead(k int) {
	from := k + touchBlock
	if k == 0 {
		from = 0
	}
	for _, i := range t.order[min(from, len(t.order)):min(k+2*touchBlock, len(t.order))] {
		t.touched ^= touchRow(t.train.store, i)
	}
}

// recordUpdate hands the update of pattern i of the training sample, whose
// per-unit values are in t.update, to the update recorder.
func (t *trainer) recordUpdate(epoch, i int) {
	t.update.Epoch, t.update.Row, t.update.Class = epoch, t.train.callerRow(i), t.train.classes.at(i)
	t.updates.RecordUpdate(&t.update)
}

// shuffle sets t.order to a permutation of the patterns from through
// to−1 drawn next from t.rng, shortening t.order to to−from.
func (t *trainer) shuffle(from, to int) {
	t.order = t.order[:to-from]
	for k := range t.order {
		t.order[k] = from + k
	}
	order := t.order
	t.rng.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
}

// batchEpoch applies the mean of the per-pattern updates once, all computed
// with the weights the epoch starts with; with L2 the weights are first
// shrunk by 1 − rate·L2.
func (t *trainer) batchEpoch(ctx context.Context, epoch int) error {
	rate := t.epochRate(epoch)
	step := rate / float64(t.train.classes.len())
	if err := t.sumUpdates(ctx, epoch, step); err != nil {
		return err
	}
	if t.opts.L2 != 0 {
		scale(1-rate*t.opts.L2, t.current.weights)
	}
	axpy(step, t.sums.weights, t.current.weights)
	axpy(step, t.sums.biases, t.current.biases)
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
	axpy(t.result.Rate, t.sums.weights, t.current.weights)
	axpy(t.result.Rate, t.sums.biases, t.current.biases)
	return nil
}

// sumUpdates sums each pattern's update, without the rate, computed with
// the weights the epoch starts with. rate is the factor the sums will be
// applied with, which the recorded updates' steps include.
func (t *trainer) sumUpdates(ctx context.Context, epoch int, rate float64) error {
	t.sums.clear()
	s := &t.train
	for i := range s.classes.len() {
		c := s.classes.at(i)
		if i%ctxRows == ctxRows-1 {
			if err := stopped(ctx, epoch); err != nil {
				return err
			}
		}
		x := s.rowOf(i, t.row)
		s.netInputsTo(t.outputs, t.current, i, x)
		for j, z := range t.outputs {
			target := t.target(j, c)
			output := t.net.Unit.activate(z)
			t.steps[j] = t.rule.Signal(target, output)
			if t.updates != nil {
				t.update.Targets[j], t.update.Outputs[j], t.update.Steps[j] = target, output, rate*t.steps[j]
			}
		}
		s.addRowTo(t.sums, t.steps, i, x, false)
		for j, signal := range t.steps {
			t.sums.biases[j] += signal
		}
		if t.updates != nil {
			t.recordUpdate(epoch, i)
		}
	}
	return nil
}

// measure returns the loss and the error count of the weights l on the
// patterns of s.
//
// The rows are measured in chunks of measureChunk, whose sums are added in
// chunk order, so the result is the same however many goroutines measure:
// up to Options.Workers (and the number of chunks). Once ctx is done no
// chunk is started, and the result is not to be used.
func (t *trainer) measure(ctx context.Context, s *sample, l layer) (loss float64, errors int) {
	n := s.classes.len()
	chunks := (n + measureChunk - 1) / measureChunk
	workers := min(chunks, len(t.chunkOutputs))
	if workers <= 1 {
		for k := range chunks {
			if ctx.Err() != nil {
				break
			}
			t.chunkStats[k] = t.measureChunk(s, l, k, t.outputs, t.rowBuffer(s, 0))
		}
	} else {
		var next atomic.Int64
		var wg sync.WaitGroup
		for w := range workers {
			wg.Add(1)
			go func(outputs, row []float64) {
				defer wg.Done()
				for k := int(next.Add(1) - 1); k < chunks && ctx.Err() == nil; k = int(next.Add(1) - 1) {
					t.chunkStats[k] = t.measureChunk(s, l, k, outputs, row)
				}
			}(t.chunkOutputs[w], t.rowBuffer(s, w))
		}
		wg.Wait()
	}
	for _, c := range t.chunkStats[:chunks] {
		errors += c.Errors
		loss += c.Loss
	}
	return loss / float64(n*len(t.outputs)), errors
}

// rowBuffer returns measuring goroutine w's scratch row for s: the
// training pass's when w is 0 and the pass has one.
func (t *trainer) rowBuffer(s *sample, w int) []float64 {
	if s.kernels != nil {
		return nil
	}
	if w == 0 && t.row != nil {
		return t.row
	}
	return t.chunkRows[w]
}

// measureChunk is the rows per measurement chunk.
const measureChunk = 4096

// measureChunk returns the error count and the summed squared misses of
// the weights l on chunk k of s, using outputs and row as its scratch
// buffers. Its outputs and decisions are those of Network.Classify.
func (t *trainer) measureChunk(s *sample, l layer, k int, outputs, row []float64) EpochStats {
	var stats EpochStats
	for i := k * measureChunk; i < min((k+1)*measureChunk, s.classes.len()); i++ {
		x, c := s.rowOf(i, row), s.classes.at(i)
		s.netInputsTo(outputs, l, i, x)
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
