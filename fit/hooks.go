package fit

import "fmt"

// Recorder is told of each epoch of a training run (Options.Recorder).
// Train calls it from the goroutine that called Train; a Recorder shared
// by Train calls running at once (the folds of a cross-validation) must be
// safe for concurrent use.
type Recorder interface {
	// RecordEpoch is called after each epoch is measured, before the
	// checks for divergence and the stop rules, so it also sees the epoch
	// that diverges. A non-nil error ends training: Train returns it,
	// wrapped.
	RecordEpoch(stats EpochStats) error
}

// UpdateRecorder is a Recorder that is also told of every update to the
// weights. When Options.Recorder is not an UpdateRecorder, training does
// no work for updates at all.
type UpdateRecorder interface {
	Recorder
	// RecordUpdate is called once per pattern per epoch, after the
	// pattern's update. u and its slices belong to the trainer and are
	// valid only during the call.
	RecordUpdate(u *Update)
}

// Update is the change one pattern makes to the weights. The change of
// output unit j is
//
//	Δw_j = Steps[j] · x,  Δb_j = Steps[j],
//
// where x is pattern Row of the Store given to Train (of the view, for a
// Subset; never a held-out pattern) and Steps[j] = rate ·
// Rule.Signal(Targets[j], Outputs[j]), at the epoch's rate (Options.Decay).
// With Options.L2 the weights, not the bias, are first multiplied by
// 1 − rate·L2: before each online update, once before a batch epoch's
// summed change. Updates change the running weights; an averaging run
// returns their average (see the package documentation).
type Update struct {
	Epoch int // from 1
	Row   int // index of the pattern in the store
	Class int // its class
	// Targets are the targets of the output units for the pattern.
	Targets []float64
	// Outputs are the outputs of the units for the pattern with the
	// weights before the update.
	Outputs []float64
	// Steps are the factors of the change of each unit, rate included.
	Steps []float64
	// Deferred is set in batch and one-pass epochs: every pattern's change
	// is computed with the weights the epoch starts with, and their sum is
	// applied once at the end of the epoch. There Steps include the batch
	// rate rate/N (one-pass: the rate); the trainer sums the signals before
	// scaling, so the sum of the reported changes equals the applied
	// change up to round-off.
	Deferred bool
}

// Converger is a stop rule (Options.Stop): after each epoch, it decides
// whether training has gone far enough. Being stateless over the history,
// one Converger may serve Train calls running at once.
type Converger interface {
	// Converged returns the reason to stop after the last epoch of
	// history, or "" to go on. history holds every epoch so far, in order,
	// the last just measured; it must not be modified or kept.
	Converged(history []EpochStats) string
}

// ZeroErrors stops training after an epoch with no misclassified
// training pattern, with reason StopZeroErrors.
type ZeroErrors struct{}

// Converged returns StopZeroErrors when the last epoch has no errors.
func (ZeroErrors) Converged(history []EpochStats) string {
	if history[len(history)-1].Errors == 0 {
		return StopZeroErrors
	}
	return ""
}

// String says when ZeroErrors stops.
func (ZeroErrors) String() string { return "no training pattern misclassified" }

// Plateau stops training once the best loss has stopped falling: after
// epoch e > Patience, when the lowest loss of epochs 1..e is lower than
// the lowest of epochs 1..e−Patience by no more than Tolerance times the
// latter. Its reason is StopConverged for the training loss, and with
// Holdout StopEarly for the loss of the held-out patterns, which is early
// stopping (Prechelt 1998: stop once the validation loss has not improved
// for a number of epochs).
//
// Comparing best losses, not one epoch's loss with the next, means that a
// noisy loss that rises for an epoch or falls by chance stops nothing:
// the run ends only when Patience epochs in a row have brought no real
// improvement. It reads EpochStats.BestLoss or BestHoldoutLoss, which
// Train fills in. A Patience below 1 counts as 1.
type Plateau struct {
	Tolerance float64
	Patience  int
	Holdout   bool
}

// Converged returns the rule's reason when the best loss has fallen by no
// more than Tolerance of itself over the last Patience epochs.
func (p Plateau) Converged(history []EpochStats) string {
	patience := max(p.Patience, 1)
	n := len(history)
	if n <= patience {
		return ""
	}
	before, now := history[n-1-patience].BestLoss, history[n-1].BestLoss
	reason := StopConverged
	if p.Holdout {
		before, now, reason = history[n-1-patience].BestHoldoutLoss, history[n-1].BestHoldoutLoss, StopEarly
	}
	if before-now <= p.Tolerance*before {
		return reason
	}
	return ""
}

// String says when the rule stops.
func (p Plateau) String() string {
	loss := "training"
	if p.Holdout {
		loss = "held-out"
	}
	return fmt.Sprintf("the best %s loss fell by at most %g of itself over %d epochs", loss, p.Tolerance, max(p.Patience, 1))
}
