package main

import (
	"io"
	"os"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"deltafit/fit"
)

// progressMinBytes is the size of input from which reading it shows a
// progress bar: smaller inputs are read before a bar would say anything.
var progressMinBytes int64 = 8 << 20

// progressThrottle is the least time between two drawings of a bar.
var progressThrottle = 100 * time.Millisecond

// progress is a progress bar on stderr, drawn only when stderr is a
// terminal: never on stdout, never into a pipe or a file, and never with
// --quiet (which discards stderr). A nil *progress does nothing, so
// callers need not ask.
type progress struct {
	bar *progressbar.ProgressBar
}

// terminal reports whether w is a terminal, where a progress bar can be
// drawn and erased.
func terminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}

// newProgress returns a bar of max steps (-1 for a count of unknown end)
// on stderr, or nil if stderr is not a terminal. With bytes the steps are
// bytes.
func newProgress(stderr io.Writer, max int64, description string, bytes bool) *progress {
	if !terminal(stderr) {
		return nil
	}
	return &progress{bar: progressbar.NewOptions64(max,
		progressbar.OptionSetWriter(stderr), // NewOptions64 writes to stdout by default
		progressbar.OptionSetDescription(description),
		progressbar.OptionShowBytes(bytes),
		progressbar.OptionShowCount(),
		progressbar.OptionSetWidth(30),
		progressbar.OptionThrottle(progressThrottle),
		progressbar.OptionClearOnFinish(),
		// No spinner goroutine for bars of unknown length: it reads the
		// bar's state without its lock.
		progressbar.OptionSetSpinnerChangeInterval(0),
	)}
}

func (p *progress) set(n int64) {
	if p != nil {
		_ = p.bar.Set64(n)
	}
}

func (p *progress) add(n int64) {
	if p != nil {
		_ = p.bar.Add64(n)
	}
}

// finish clears the bar from the terminal.
func (p *progress) finish() {
	if p != nil {
		_ = p.bar.Finish()
	}
}

// readProgress shows how much of an input has been read, once it has
// read progressMinBytes: out of the file's size, or as a count for a
// pipe.
type readProgress struct {
	mu     sync.Mutex // reading goes on in a goroutine of its own
	stderr io.Writer
	size   int64 // -1 when unknown
	bar    *progress
	shown  bool // the bar was made (if stderr is a terminal)
	done   bool // and cleared: nothing more is shown
}

// newReadProgress returns the progress of reading f (nil: stdin of
// unknown size).
func newReadProgress(stderr io.Writer, f *os.File) *readProgress {
	r := &readProgress{stderr: stderr, size: -1}
	if f != nil {
		if info, err := f.Stat(); err == nil && info.Mode().IsRegular() {
			r.size = info.Size()
		}
	}
	return r
}

// read is told the bytes read so far.
func (r *readProgress) read(n int64) {
	if r == nil {
		return
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.done {
		return
	}
	if !r.shown && n >= progressMinBytes {
		r.shown = true
		r.bar = newProgress(r.stderr, r.size, "reading", true)
	}
	r.bar.set(n)
}

// finish clears the bar, before anything else is written to stderr.
func (r *readProgress) finish() {
	if r == nil {
		return
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	if !r.done {
		r.done = true
		r.bar.finish()
	}
}

// fitProgress shows a fit's work: a count of epochs while the model is
// trained on all rows (and the auto encoding chosen), then the folds of
// the cross-validation out of their number. It is a fit.Recorder, safe
// for the concurrent training of folds.
type fitProgress struct {
	mu     sync.Mutex
	stderr io.Writer
	epochs *progress
	folds  *progress
	inCV   bool
}

// newFitProgress returns the progress of a fit, or nil if stderr is not a
// terminal. A nil *fitProgress does nothing.
func newFitProgress(stderr io.Writer) *fitProgress {
	if !terminal(stderr) {
		return nil
	}
	return &fitProgress{stderr: stderr, epochs: newProgress(stderr, -1, "training: epochs", false)}
}

// RecordEpoch counts an epoch until the cross-validation starts.
func (f *fitProgress) RecordEpoch(fit.EpochStats) error {
	f.mu.Lock()
	defer f.mu.Unlock()
	if !f.inCV {
		f.epochs.add(1)
	}
	return nil
}

// fold is told that done of total folds are done.
func (f *fitProgress) fold(done, total int) {
	f.mu.Lock()
	defer f.mu.Unlock()
	if !f.inCV {
		f.inCV = true
		f.epochs.finish()
		f.folds = newProgress(f.stderr, int64(total), "cross-validation: folds", false)
	}
	f.folds.set(int64(done))
}

func (f *fitProgress) finish() {
	if f == nil {
		return
	}
	f.mu.Lock()
	defer f.mu.Unlock()
	f.epochs.finish()
	f.folds.finish()
}

// recorder returns the recorder to train with: r (nil for none) told of
// every epoch as before, and f too.
func (f *fitProgress) recorder(r fit.Recorder) fit.Recorder {
	switch inner := r.(type) {
	case nil:
		return f
	case fit.UpdateRecorder:
		return updateRecorders{inner, f}
	}
	return recorders{r, f}
}

// recorders tells two recorders of each epoch.
type recorders struct{ first, second fit.Recorder }

func (r recorders) RecordEpoch(s fit.EpochStats) error {
	if err := r.first.RecordEpoch(s); err != nil {
		return err
	}
	return r.second.RecordEpoch(s)
}

// updateRecorders tells an UpdateRecorder of each update and both of each
// epoch.
type updateRecorders struct {
	first  fit.UpdateRecorder
	second fit.Recorder
}

func (r updateRecorders) RecordEpoch(s fit.EpochStats) error {
	return recorders{r.first, r.second}.RecordEpoch(s)
}

func (r updateRecorders) RecordUpdate(u *fit.Update) { r.first.RecordUpdate(u) }
