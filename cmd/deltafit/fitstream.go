package main

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"runtime/debug"
	"strconv"
	"strings"

	"github.com/spf13/pflag"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/fit"
	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// streamFlags are fit's flags for data larger than memory.
type streamFlags struct {
	stream bool
	memory string
	cache  string
	block  int
}

func (f *streamFlags) add(fs *pflag.FlagSet) {
	fs.BoolVar(&f.stream, "stream", false, "fit on data larger than memory: read DATA twice (a plan from a bounded sketch, then the rows encoded into a pattern store on disk) and train block by block from the store")
	fs.StringVar(&f.memory, "memory", "", "memory budget, such as 4GB or 512MiB: a DATA file whose in-memory fit would need more is fitted as with --stream (default: half the physical memory)")
	fs.StringVar(&f.cache, "cache", "", "with --stream: keep the pattern store in this file (by default a temporary file, removed afterwards)")
	fs.IntVar(&f.block, "block", 0, "visit each online epoch block-shuffled: blocks of this many consecutive rows in a seeded order, the rows of each block shuffled (0: one full shuffle; with --stream, the store's blocks of about 4 MiB of patterns)")
}

// memoryPerInputByte is how many bytes of memory an in-memory fit takes
// per byte of its input file, for the --memory switch: measured at up to
// 20 for a synthetic CSV of 8 numeric columns (71 bytes a row; 1,419 MB of
// peak memory for 10^6 rows with the default auto encoding, which fits
// three encodings to choose one, and 5.0 with thermometer:8; README,
// Performance). Files of other shapes differ; the switch is a guard, not a
// promise.
const memoryPerInputByte = 20

// parseSize reads a size such as 512MB, 4GB, 1.5GiB or 1000000 (bytes):
// K, M, G and T with B are powers of 1000, with iB powers of 1024.
func parseSize(s string) (int64, error) {
	text := strings.TrimSpace(s)
	units := []struct {
		suffix string
		scale  float64
	}{{"TIB", 1 << 40}, {"GIB", 1 << 30}, {"MIB", 1 << 20}, {"KIB", 1 << 10},
		{"TB", 1e12}, {"GB", 1e9}, {"MB", 1e6}, {"KB", 1e3}, {"B", 1}}
	scale := 1.0
	upper := strings.ToUpper(text)
	for _, u := range units {
		if strings.HasSuffix(upper, u.suffix) {
			scale, text = u.scale, strings.TrimSpace(text[:len(text)-len(u.suffix)])
			break
		}
	}
	v, err := strconv.ParseFloat(text, 64)
	if err != nil || !(v > 0) || v*scale > 1<<62 {
		return 0, fmt.Errorf("%q is not a size: write a number and a unit, such as 512MB or 4GiB", s)
	}
	return int64(v * scale), nil
}

// physicalMemory returns the machine's memory in bytes from /proc/meminfo,
// or 0 when it cannot be read.
func physicalMemory() int64 {
	f, err := os.Open("/proc/meminfo")
	if err != nil {
		return 0
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if rest, ok := strings.CutPrefix(sc.Text(), "MemTotal:"); ok {
			kb, err := strconv.ParseInt(strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(rest), "kB")), 10, 64)
			if err == nil {
				return kb << 10
			}
		}
	}
	return 0
}

// formatSize writes bytes in GB, MB or kB.
func formatSize(b int64) string {
	switch {
	case b >= 1e9:
		return strconv.FormatFloat(float64(b)/1e9, 'f', 1, 64) + " GB"
	case b >= 1e6:
		return strconv.FormatFloat(float64(b)/1e6, 'f', 0, 64) + " MB"
	}
	return strconv.FormatFloat(float64(b)/1e3, 'f', 0, 64) + " kB"
}

// streaming decides whether fit streams: with --stream, or when DATA is a
// file whose in-memory fit would need more than the memory budget, and
// then returns the note to print on stderr once the flags are checked.
func (f *streamFlags) streaming(path string) (stream bool, note string, err error) {
	budget := physicalMemory() / 2
	if f.memory != "" {
		var err error
		if budget, err = parseSize(f.memory); err != nil {
			return false, "", usagef("--memory: %v", err)
		}
	}
	if f.stream || path == "-" || budget <= 0 {
		return f.stream, "", nil
	}
	info, err := os.Stat(path)
	if err != nil || !info.Mode().IsRegular() {
		return false, "", nil // the reader reports what is wrong
	}
	if need := info.Size() * memoryPerInputByte; need > budget {
		return true, fmt.Sprintf("deltafit: note: %s: a fit in memory would need about %s, over the memory budget of %s (--memory): fitting as with --stream\n",
			tabular.DisplayName(path), formatSize(need), formatSize(budget)), nil
	}
	return false, "", nil
}

// streamRefusals are fit's flags a fit on data larger than memory does not
// offer yet, and why.
var streamRefusals = []struct{ flag, why string }{
	{"folds", "cross-validation keeps a copy of each fold's rows"},
	{"repeats", "cross-validation keeps a copy of each fold's rows"},
	{"oof", "out-of-fold predictions need --folds"},
	{"holdout", "the held-out split keeps lists of rows"},
}

// checkStream refuses what the stream path cannot do, as usage errors,
// and returns the learner's numeric encoding: auto, which chooses on an
// inner split of rows held in memory, becomes thermometer with the same
// bins when not given, with a note.
func checkStream(opts *fitOptions, path string, given func(string) bool, stderr io.Writer) error {
	why := "--stream"
	if !opts.stream.stream {
		why = "a fit on data larger than the memory budget (--memory)"
	}
	if path == "-" {
		return usagef("%s reads DATA twice: give a file, not - (stdin)", why)
	}
	for _, r := range streamRefusals {
		if given(r.flag) {
			return usagef("--%s is not offered with %s yet: %s", r.flag, why, r.why)
		}
	}
	enc, err := encode.ParseNumericEncoding(opts.learn.numeric)
	if err != nil {
		return usagef("--numeric: %v", err)
	}
	if enc.Method == encode.Auto {
		if given("numeric") {
			return usagef("--numeric auto is not offered with %s yet: it chooses on an inner split of rows held in memory; give thermometer:K, onehot:K, threshold, zscore, minmax or hybrid:K", why)
		}
		opts.learn.numeric = fmt.Sprintf("%s:%d", encode.Thermometer, enc.Bins)
		fmt.Fprintf(stderr, "deltafit: note: %s encodes numeric columns as %s (auto needs rows in memory)\n", why, opts.learn.numeric)
	}
	return nil
}

// runFitStream fits on data larger than memory: it infers the column
// kinds from the first rows, reads DATA once to fit the plan from bounded
// summaries, again to encode every row into a pattern store on disk, and
// trains from the store block by block.
func runFitStream(ctx context.Context, opts fitOptions, path string, stdout, stderr io.Writer, format export.Format) error {
	if os.Getenv("GOMEMLIMIT") == "" {
		// What the stream path holds is bounded (a batch, the sketches, a
		// few decoded blocks, a byte per row of labels); a soft limit on
		// the heap makes the collector return the decoded blocks it
		// drops before the heap doubles past it.
		defer debug.SetMemoryLimit(debug.SetMemoryLimit(streamHeapLimit))
	}
	learner, err := opts.learn.learner()
	if err != nil {
		return err
	}
	if err := opts.missing.check(); err != nil {
		return err
	}
	learner.Fit.Warn = warnOnce(stderr)
	readOpts, err := opts.input.readOptions()
	if err != nil {
		return err
	}
	readOpts.Target = opts.learn.target
	columns, err := streamColumns(path, &readOpts, opts.learn.target, opts.learn.ignore)
	if err != nil {
		return err
	}
	streamOpts := evaluate.StreamOptions{Target: opts.learn.target, DropMissing: opts.missing.mode == "drop"}

	// Pass 1: the plan, and the sha256 of DATA.
	in, err := openStream(path, nil, stderr, stderr, readOpts, columns, true)
	if err != nil {
		return err
	}
	summary, err := evaluate.SummarizeStream(ctx, in, streamOpts)
	var sha string
	if err == nil {
		sha, err = in.sha256()
	}
	in.close()
	if err != nil {
		return streamHint(err)
	}
	name := tabular.DisplayName(path)
	if summary.NoTarget > 0 {
		fmt.Fprintf(stderr, "deltafit: warning: %s: %d %s with no target value left out (first at row %d): a row needs its class to be learned from or scored\n",
			name, summary.NoTarget, plural(summary.NoTarget, "row"), summary.FirstNoTarget)
	}
	if summary.Dropped > 0 {
		fmt.Fprintf(stderr, "deltafit: warning: %s: %d %s with a missing cell left out by --missing drop (first at row %d)\n",
			name, summary.Dropped, plural(summary.Dropped, "row"), summary.FirstDropped)
	}
	plan, err := summary.Plan(learner.Plan)
	if err != nil {
		return err
	}
	if plan.QuantileRankError > 0 {
		fmt.Fprintf(stderr, "deltafit: note: %s: quantile cuts from a bounded sketch, each within %.3g%% of the rows of its exact rank (quantile_rank_error %.3g)\n",
			name, 100*plan.QuantileRankError, plan.QuantileRankError)
	}

	// Pass 2: the pattern store.
	packed := plan.Binary() && plan.Width() > 0
	block := opts.stream.block
	if block <= 0 {
		block = fit.DiskBlockRows(plan.Width(), packed)
	}
	storePath := opts.stream.cache
	if storePath == "" {
		dir := os.Getenv("TMPDIR")
		if dir == "" {
			dir = os.TempDir()
		}
		f, err := os.CreateTemp(dir, "deltafit-patterns-*.dfp")
		if err != nil {
			return fmt.Errorf("cannot make the pattern store: %w", err)
		}
		storePath = f.Name()
		f.Close()
		defer os.Remove(storePath)
		defer export.RemoveOnSignal(storePath)()
	}
	w, err := fit.CreateDiskStore(storePath, plan.Width(), len(summary.Labels), block, packed)
	if err != nil {
		return err
	}
	forget := func() {}
	if opts.stream.cache != "" {
		// A store cut short by a signal is removed; a whole one is kept.
		forget = export.RemoveOnSignal(storePath)
	}
	in, err = openStream(path, nil, stderr, stderr, readOpts, columns, false)
	if err != nil {
		w.Abort()
		return err
	}
	err = summary.EncodeStream(ctx, in, plan, streamOpts, w)
	in.close()
	if err == nil {
		err = w.Close()
	}
	if err != nil {
		w.Abort()
		return streamHint(err)
	}
	forget()

	// Training from the store.
	store, err := fit.OpenDiskStore(storePath, 0)
	if err != nil {
		return err
	}
	defer store.Close()
	learner.Fit.Block = block
	fitted, err := learner.TrainDisk(ctx, store, plan, opts.learn.target, summary.Labels)
	if err != nil {
		return divergenceHint(err, opts.learn)
	}
	if plan.Width() == 0 {
		fmt.Fprintf(stderr, "deltafit: warning: %s: no input units (the features are ignored, constant or empty): the model gives every row the same class\n", name)
	}
	modelOpts := opts.learn.modelOptions(opts.input.kinds)
	modelOpts.Block = block
	modelPath, err := writeModelFile(opts.output, stdout, export.NewModel(fitted, modelOpts, export.DataInfo{Rows: summary.Rows, SHA256: sha}))
	if err != nil {
		return err
	}
	data := export.DataSummary{Source: name, SHA256: sha, Rows: summary.Rows, Features: len(plan.Features), Inputs: plan.Width(),
		Target: opts.learn.target, Labels: summary.Labels, ClassCounts: summary.Counts}
	report := export.NewFittedReport(fitted, data, modelPath)
	settings := export.NewSettings(path, sha, summary.Rows, opts.learn.target, plan, modelOpts, export.NewTraining(fitted.Result), learner.Fit)
	report.Settings = &settings
	if err := writeStudyOutputs(report, &evaluate.Study{Fitted: fitted}, nil, opts); err != nil {
		return err
	}
	out := stdout
	if opts.output == "-" {
		out = stderr
	}
	return export.WriteFitReport(out, format, report)
}

// streamColumns infers the kinds of DATA's columns from its first rows
// into readOpts.Kinds (those declared with --kind stay), checks the target
// and the ignored columns, and returns the columns to read: every one but
// the ignored.
func streamColumns(path string, readOpts *ingest.ReadOptions, target string, ignore []string) ([]string, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("cannot open the data: %w", err)
	}
	defer f.Close()
	opts := *readOpts
	opts.Source = inPlace(f)
	rr, err := ingest.NewRecordReader(path, f, opts)
	if err != nil {
		return nil, err
	}
	defer rr.Release()
	kinds, err := ingest.InferKinds(path, rr, kindRows, *readOpts)
	if err != nil {
		return nil, err
	}
	readOpts.Kinds = kinds
	var columns []string
	names := map[string]bool{}
	for _, field := range rr.Schema().Fields() {
		names[field.Name] = true
		if !contains(ignore, field.Name) {
			columns = append(columns, field.Name)
		}
	}
	if !names[target] {
		return nil, &tabular.DataError{File: path, Name: target, Err: fmt.Errorf("there is no target column of that name; the columns are %s", columnNames(rr.Schema(), 20))}
	}
	for _, name := range ignore {
		switch {
		case name == target:
			return nil, &tabular.DataError{File: path, Name: name, Err: fmt.Errorf("the target column cannot also be ignored")}
		case !names[name]:
			return nil, &tabular.DataError{File: path, Name: name, Err: fmt.Errorf("there is no column of that name to ignore; the columns are %s", columnNames(rr.Schema(), 20))}
		}
	}
	return columns, nil
}

// streamHeapLimit is the soft heap limit of a fit on data larger than
// memory, unless GOMEMLIMIT sets one: the garbage collector works harder
// near it rather than let the heap grow.
const streamHeapLimit = 256 << 20

// kindRows is how many first rows a fit on data larger than memory infers
// the column kinds from.
const kindRows = 65536

// streamHint adds to a data error of a stream fit that the kinds came
// from the first rows.
func streamHint(err error) error {
	var de *tabular.DataError
	if errors.As(err, &de) && strings.Contains(de.Error(), "declared numeric") {
		return fmt.Errorf("%w (a fit on data larger than memory takes column kinds from the first %d rows; declare the column with --kind COLUMN=categorical)", err, kindRows)
	}
	return err
}

// plural returns word, with an s unless n is 1.
func plural(n int, word string) string {
	if n == 1 {
		return word
	}
	return word + "s"
}
