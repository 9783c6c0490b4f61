// Package fit trains single-layer error-driven linear classifiers: one
// layer of output units over encoded input patterns, with weights changed
// pattern by pattern (online) or once per epoch (batch) by a learning rule.
//
// The default rule is the delta rule of Widrow and Hoff (LMS),
//
//	Δw_ij = rate · (t_j − y_j) · x_i,   Δb_j = rate · (t_j − y_j),
//
// where t_j is output unit j's target (1 if the pattern is of the unit's
// class, 0 if not) and y_j its output. The Hebbian rule, Δw_ij = rate · t_j ·
// x_i with bipolar targets ±1, is offered beside it behind the same small
// Rule interface.
//
// With linear output units and full-batch updates, the delta rule is
// gradient descent on the mean squared error, so its fixed point is the
// least-squares solution of the design matrix [X, 1] against the targets.
// Its mean converges for 0 < rate < 2/λmax, where λmax is the largest
// eigenvalue of R, the mean of x̃x̃ᵀ over the patterns (x̃ = [x, 1]);
// AutoRate picks a rate inside that region.
//
// A network has one output unit per class when there are more than two
// classes, and a single unit, which fires for class index 1, when there
// are two. The class of a pattern is the arg max of its scores, ties going
// to the lowest class index.
//
// Training reads its patterns through Store (store.go), a read-only set
// of rows: Patterns is the dense float64 store, Subset a view of some rows
// of another store without copying them (the folds of a cross-validation
// share one store this way). A store that can compute with a row in place,
// such as one of packed 0/1 inputs, also implements RowKernels, which the
// trainer then uses instead of reading rows out.
//
// Options hold the hooks of a run (hooks.go): Stop, the rules that end
// training early (Converger; by default ZeroErrors then LossChange), a
// Recorder told of each epoch and, if it is an UpdateRecorder, of every
// update, and Workers, the goroutines that measure an epoch. TrainContext
// stops once its context is done.
//
// Invariants:
//   - Inputs are never modified: neither the store nor the class labels.
//   - Training is deterministic: the same patterns, labels and Options
//     (Seed included) give bit-identical weights. All randomness comes from
//     a math/rand/v2 PCG seeded by (Options.Seed, epoch); nothing global.
//   - Initial weights and biases are zero.
//   - Train never returns a Network holding a NaN or an infinity: a run
//     whose weights or loss stop being finite (or whose loss passes 1e12)
//     fails with an error wrapping ErrDiverged.
//   - An epoch allocates nothing but the goroutines that measure it in
//     parallel when it has more than one chunk of 4096 patterns: buffers
//     are made once per call to Train, recording included (Update and its
//     slices are reused).
//   - Training uses one core (online updates are sequential by nature);
//     measuring an epoch's loss and errors uses up to Options.Workers
//     goroutines (by default GOMAXPROCS, read once when Train starts),
//     with results that do not depend on how many.
//   - Recording changes nothing: with or without a Recorder, the same
//     weights to the bit.
//   - Anything caused by the data or the options is an error, never a panic.
package fit
