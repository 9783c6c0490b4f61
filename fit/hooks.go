package fit

import "math"

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
// Subset) and Steps[j] = rate · Rule.Signal(Targets[j], Outputs[j]).
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

// LossChange stops training, with reason StopConverged, once the loss
// changes by less than Tolerance·max(1, previous loss) from one epoch to
// the next.
type LossChange struct {
	Tolerance float64
}

// Converged returns StopConverged when the last two epochs' losses differ
// by less than the tolerance.
func (c LossChange) Converged(history []EpochStats) string {
	n := len(history)
	if n < 2 {
		return ""
	}
	previous, loss := history[n-2].Loss, history[n-1].Loss
	if math.Abs(loss-previous) < c.Tolerance*math.Max(1, previous) {
		return StopConverged
	}
	return ""
}
