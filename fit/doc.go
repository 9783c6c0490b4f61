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
// Invariants:
//   - Inputs are never modified: neither the Patterns nor the class labels.
//   - Training is deterministic: the same patterns, labels and Options
//     (Seed included) give bit-identical weights. All randomness comes from
//     a math/rand/v2 PCG seeded by (Options.Seed, epoch); nothing global.
//   - Initial weights and biases are zero.
//   - Train never returns a Network holding a NaN or an infinity: a run
//     whose weights or loss stop being finite (or whose loss passes 1e12)
//     fails with an error wrapping ErrDiverged.
//   - An epoch allocates nothing but the goroutines that measure it in
//     parallel when it has more than one chunk of 4096 patterns: buffers
//     are made once per call to Train.
//   - Training uses one core (online updates are sequential by nature);
//     measuring an epoch's loss and errors uses all of them, with results
//     that do not depend on how many.
//   - Anything caused by the data or the options is an error, never a panic.
package fit
