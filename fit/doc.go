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
// eigenvalue of R, the mean of x̃x̃ᵀ over the patterns (x̃ = [x, 1]).
//
// # The automatic rate
//
// Online, one pattern's update changes that pattern's error on a linear
// unit by the factor 1 − rate·‖x̃‖², so the update overshoots, and
// repeated visits make the error grow, once rate·‖x̃‖² ≥ 2: a single
// pattern far out can make a run diverge whatever the mean row does
// (normalized LMS, Nagumo & Noda 1967, steps η/(ε + ‖x‖²) with
// 0 < η < 2; here ‖x̃‖² = 1 + ‖x‖² ≥ 1 plays the part of ε). The automatic
// online rate is therefore 1/(max‖x̃‖² + L2), half the bound that holds
// for every pattern (BoundEveryRow); one rate for all rows, rather than a
// step per row, keeps the fixed point at least squares. Batch, the
// automatic rate is 1/(λmax + L2), half the bound of gradient descent
// (BoundMean); since λmax ≤ tr(R) ≤ max‖x̃‖², the online bound is the
// tighter. Result names the bound that applies (Bound, BoundName);
// Options.Warn hears of a fixed rate at or above it before training, and
// a divergence error names the largest bound the rate crossed.
//
// # Averaged weights
//
// At a constant rate the online weights never settle: they wander about
// the minimum with an excess error that grows with the rate (Widrow's
// misadjustment, μ·tr R/(2 − μ·tr R)). An online run therefore returns the
// average of the weights after every update (Polyak & Juditsky 1992; Bach
// & Moulines 2013) over the last part of training: after epoch e ≥ 2, the
// updates of epochs 2^(k−1)+1 through e, where 2^k ≤ e < 2^(k+1). That is
// at least the last half and at most the last three quarters of the epochs
// run, however many that turns out to be, so it suits any stop rule; after
// epoch 1, the updates of epoch 1. It costs two running sums of the
// weights: the sum over epochs 2^(k−1)+1..2^k and the sum since. The
// loss, errors and stop rules of each epoch see the averaged weights, the
// weights Train would return if it stopped there (Result.AverageFrom and
// Result.Epoch give the span). Options.LastIterate returns the last
// weights instead; batch and one-pass runs, which have no update noise,
// never average. As every epoch visits each pattern once rather than
// drawing patterns independently, the average at a constant rate keeps a
// small bias (half a percent of the weights on Iris); a decaying rate
// (Options.Decay, rate/(1 + decay·(e − 1)) in epoch e: Robbins & Monro
// 1951; Bottou 2012) removes it.
//
// # Stop rules
//
// Training ends after Options.Epochs epochs, after the single pass of a
// OnePass rule, or when a stop rule of Options.Stop says so. By default
// those are ZeroErrors (unless Options.KeepGoing) and Plateau: the run
// has converged once the best loss so far has fallen by no more than
// Tolerance (1e-6) of itself over the last Patience (10) epochs. With
// Options.Holdout, a stratified fraction of the patterns is held out,
// Plateau watches their loss instead (early stopping, Prechelt 1998), and
// the weights returned are those of the epoch with the lowest held-out
// loss. Result.Stop gives the reason, Result.StopRule the rule in words.
//
// Options.L2 adds weight decay (Krogh & Hertz 1992): the weights, not the
// biases, shrink by 1 − rate·L2 at each update, so training minimizes
// the mean squared error plus L2/2·‖w‖².
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
// such as BinaryPatterns, which packs 0/1 inputs as the indices of their
// 1s, also implements RowKernels, which the trainer then uses instead of
// reading rows out; Compact packs patterns whenever they are all 0/1, and
// training on them gives the same bits as on the dense rows.
//
// DiskStore reads a store from a file written once by DiskWriter (layout in
// disk.go), block by block, for data larger than memory: train it with
// Options.Block set to its BlockRows, so each online epoch visits the blocks
// in a seeded order and the rows of each block in a seeded permutation,
// reading each block once; TrainBytesContext takes its one-byte labels. The
// same Block in memory gives the same bits.
//
// Options hold the hooks of a run (hooks.go): Stop, the rules that end
// training early (Converger; by default ZeroErrors then Plateau), a
// Recorder told of each epoch and, if it is an UpdateRecorder, of every
// update, Warn, told of doubtful options before training, and Workers,
// the goroutines that measure an epoch. TrainContext stops once its
// context is done.
//
// Invariants:
//   - Inputs are never modified: neither the store nor the class labels.
//   - Training is deterministic: the same patterns, labels and Options
//     (Seed included) give bit-identical weights. All randomness comes from
//     a math/rand/v2 PCG seeded by (Options.Seed, epoch), and the held-out
//     patterns from one seeded by (Options.Seed, 0); nothing global.
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
