// Command deltafit-bench measures deltafit's speed on seeded synthetic
// data as ratios against baselines timed in the same run: a plain memory
// stream, gonum's blas32 kernels, a closed-form least-squares fit, arrow-go's
// CSV reader, and itself at other sizes and core counts. It prints a table,
// or with -format json one object.
//
// The data are invented and written to a temporary directory that is
// removed on exit. stream_rss_mb runs the deltafit binary's fit --stream
// as a child; sizes of the linearity series too large to fit in memory
// (or from -stream-from rows) are timed on a disk pattern store.
package main

import (
	"bufio"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"runtime/pprof"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"text/tabwriter"
	"time"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/ingest/encode"
)

// options are the command's flags.
type options struct {
	rows, columns, classes int
	encoding               string
	seed                   uint64
	quick                  bool
	format                 string
	epochs                 int
	cvEpochs               int
	linearity              string
	childRSS               string // internal: measure peak RSS of a fit of this file
	childExec              bool   // internal: run the arguments as a command, print its peak RSS
	writeCSV               string // write the synthetic CSV here and stop
	deltafit               string // the deltafit binary whose fit --stream is measured
	streamFrom             int    // rows from which the linearity series trains from a disk store
	cpuProfile             string
}

// report is what one run measured. Ratios are dimensionless; times are
// seconds.
type report struct {
	Rows     int    `json:"rows"`
	Columns  int    `json:"columns"`
	Classes  int    `json:"classes"`
	Encoding string `json:"encoding"`
	Units    int    `json:"units"`
	// Packed says whether the patterns trained on the packed 0/1 store.
	Packed bool `json:"packed"`

	EpochVsStream  float64 `json:"epoch_vs_stream"`
	BlasVsEpoch    float64 `json:"blas_vs_epoch"`
	QRVsFit        float64 `json:"qr_vs_fit"`
	FixedVsEpoch   float64 `json:"fixed_vs_epoch"`
	IngestVsArrow  float64 `json:"ingest_vs_arrow"`
	CVSpeedup      float64 `json:"cv_speedup"`
	Linearity      float64 `json:"linearity"`
	RSSBytesPerRow float64 `json:"rss_bytes_per_row"`
	// StreamRSSMB is the peak resident set, in MiB, of deltafit fit
	// --stream on the largest size of the linearity series; 0 when no
	// deltafit binary was found.
	StreamRSSMB float64 `json:"stream_rss_mb"`
	// StreamRows is that size, and StreamedSizes the sizes of the
	// linearity series timed on a disk store.
	StreamRows      int   `json:"stream_rows"`
	StreamedSizes   []int `json:"streamed_sizes,omitempty"`
	ToleranceEpochs int   `json:"tolerance_epochs"`

	Times   map[string]float64 `json:"times"`
	Machine machine            `json:"machine"`
}

type machine struct {
	CPU        string `json:"cpu"`
	Cores      int    `json:"cores"`
	GOMAXPROCS int    `json:"gomaxprocs"`
	Go         string `json:"go"`
	OS         string `json:"os"`
}

func main() {
	var o options
	flag.IntVar(&o.rows, "n", 1_000_000, "rows of synthetic data")
	flag.IntVar(&o.columns, "columns", 8, "numeric columns")
	flag.IntVar(&o.classes, "classes", 3, "classes")
	flag.StringVar(&o.encoding, "encoding", "thermometer:8", "numeric encoding")
	flag.Uint64Var(&o.seed, "seed", 1, "seed of the data and the runs")
	flag.BoolVar(&o.quick, "quick", false, "200000 rows and fewer repeats: under a minute")
	flag.StringVar(&o.format, "format", "table", "table or json")
	flag.IntVar(&o.epochs, "epochs", 4, "epochs timed per run (at least 2)")
	flag.IntVar(&o.cvEpochs, "cv-epochs", 2, "epochs per fold of the timed cross-validation")
	flag.StringVar(&o.linearity, "linearity", "", "comma-separated row counts for the linearity check (default n/10,n; 1e5,1e6 at full size)")
	flag.StringVar(&o.childRSS, "child-rss", "", "internal: fit FILE and print the peak resident set in bytes")
	flag.BoolVar(&o.childExec, "child-exec", false, "internal: run the arguments as a command and print its peak resident set in bytes")
	flag.StringVar(&o.writeCSV, "write-csv", "", "write the synthetic table of -n rows as CSV to this file and stop (for fits of data larger than memory)")
	flag.StringVar(&o.deltafit, "deltafit", "", "the deltafit binary whose fit --stream gives stream_rss_mb (default: deltafit beside this program, else on PATH)")
	flag.IntVar(&o.streamFrom, "stream-from", 0, "rows from which the linearity series trains from a disk pattern store, block-shuffled, as fit --stream does (default: sizes whose in-memory fit would need more than half the physical memory)")
	flag.StringVar(&o.cpuProfile, "cpuprofile", "", "write a CPU profile of the run to this file")
	flag.Parse()
	if o.cpuProfile != "" {
		f, err := os.Create(o.cpuProfile)
		if err == nil {
			err = pprof.StartCPUProfile(f)
		}
		if err != nil {
			fmt.Fprintln(os.Stderr, "deltafit-bench:", err)
			os.Exit(1)
		}
		defer pprof.StopCPUProfile()
	}
	if err := run(o, os.Stdout); err != nil {
		fmt.Fprintln(os.Stderr, "deltafit-bench:", err)
		pprof.StopCPUProfile()
		os.Exit(1)
	}
}

func run(o options, w io.Writer) error {
	enc, err := encode.ParseNumericEncoding(o.encoding)
	if err != nil {
		return err
	}
	opts := encode.Options{Numeric: enc}
	if o.childRSS != "" {
		return childRSS(o.childRSS, opts, w)
	}
	if o.childExec {
		return childExec(flag.Args(), w)
	}
	if o.writeCSV != "" {
		return writeCSVFile(o.writeCSV, shape{Rows: o.rows, Columns: o.columns, Classes: o.classes, Seed: o.seed})
	}
	if o.quick {
		if !flagSet("n") {
			o.rows = 200_000
		}
		if !flagSet("cv-epochs") {
			o.cvEpochs = 1
		}
		repeats = 1
	}
	if o.epochs < 2 {
		return errors.New("-epochs must be at least 2")
	}
	if o.format != "table" && o.format != "json" {
		return fmt.Errorf("-format %q: want table or json", o.format)
	}
	sizes, err := linearitySizes(o)
	if err != nil {
		return err
	}
	r, err := measureAll(o, opts, sizes)
	if err != nil {
		return err
	}
	if o.format == "json" {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(r)
	}
	return printTable(w, r)
}

func flagSet(name string) bool {
	set := false
	flag.Visit(func(f *flag.Flag) { set = set || f.Name == name })
	return set
}

func linearitySizes(o options) ([]int, error) {
	if o.linearity == "" {
		if o.rows >= 1_000_000 {
			return []int{100_000, 1_000_000}, nil
		}
		return []int{o.rows / 10, o.rows}, nil
	}
	var sizes []int
	for _, f := range strings.Split(o.linearity, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil || v < 100 {
			return nil, fmt.Errorf("-linearity %q: want row counts of at least 100", o.linearity)
		}
		sizes = append(sizes, int(v))
	}
	return sizes, nil
}

func measureAll(o options, opts encode.Options, sizes []int) (*report, error) {
	r := &report{Rows: o.rows, Columns: o.columns, Classes: o.classes, Encoding: o.encoding, Times: map[string]float64{}}
	r.Machine = machine{CPU: cpuModel(), Cores: runtime.NumCPU(), GOMAXPROCS: runtime.GOMAXPROCS(0), Go: runtime.Version(), OS: runtime.GOOS + "/" + runtime.GOARCH}
	sec := func(key string, d time.Duration) { r.Times[key] = d.Seconds() }

	dir, err := os.MkdirTemp("", "deltafit-bench")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "synthetic.csv")
	s := shape{Rows: o.rows, Columns: o.columns, Classes: o.classes, Seed: o.seed}
	if err := os.WriteFile(path, syntheticCSV(s), 0o600); err != nil {
		return nil, err
	}

	// Ingest: ours from file to patterns, against arrow-go's reader alone.
	ours, err := ingestTime(path, opts)
	if err != nil {
		return nil, err
	}
	arrowOnly, err := arrowTime(path, o.columns)
	if err != nil {
		return nil, err
	}
	sec("ingest_encode", ours)
	sec("arrow_csv", arrowOnly)
	r.IngestVsArrow = arrowOnly.Seconds() / ours.Seconds()

	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	d, err := readDataset(path, data)
	if err != nil {
		return nil, err
	}
	data = nil
	e, err := encodeAll(d, opts, true)
	if err != nil {
		return nil, err
	}
	r.Units = e.patterns.Width
	sec("plan", e.planTime)
	sec("encode", e.encTime)

	// An epoch and the fixed costs of a fit.
	numClasses := len(d.Labels)
	store := e.store
	_, r.Packed = store.(*fit.BinaryPatterns)
	epoch, fixed, err := trainTimes(store, d.Classes, numClasses, o.epochs, o.seed)
	if err != nil {
		return nil, err
	}
	sec("epoch", epoch)
	sec("train_fixed", fixed)
	if r.Packed {
		dense, _, err := trainTimes(e.patterns, d.Classes, numClasses, o.epochs, o.seed)
		if err != nil {
			return nil, err
		}
		sec("epoch_dense", dense)
	}
	allFixed := fixed + e.planTime + e.encTime
	sec("fixed", allFixed)
	r.FixedVsEpoch = allFixed.Seconds() / epoch.Seconds()

	// The memory stream and the blas32 epoch on float32 rows.
	values := float32Rows(e.patterns)
	stream, _ := streamTime(values)
	sec("stream", stream)
	r.EpochVsStream = epoch.Seconds() / stream.Seconds()
	rate, _, err := fit.AutoRate(e.patterns, fit.Options{})
	if err != nil {
		return nil, err
	}
	blas := blasEpochTime(values, e.patterns.Width, d.Classes, numClasses, float32(rate), o.seed)
	values = nil
	sec("blas_epoch", blas)
	r.BlasVsEpoch = blas.Seconds() / epoch.Seconds()

	// Closed form against a fit to tolerance.
	qr, err := qrTime(e.patterns, d.Classes, numClasses)
	if err != nil {
		return nil, err
	}
	sec("qr", qr)
	tol, epochs, err := toleranceFitTime(store, d.Classes, numClasses, o.seed)
	if err != nil {
		return nil, err
	}
	sec("fit_to_tolerance", tol)
	r.ToleranceEpochs = epochs
	r.QRVsFit = qr.Seconds() / tol.Seconds()
	e = nil

	// Cross-validation on one core and on all.
	one, err := cvTime(d, opts, o.cvEpochs, 1, o.seed)
	if err != nil {
		return nil, err
	}
	every, err := cvTime(d, opts, o.cvEpochs, runtime.GOMAXPROCS(0), o.seed)
	if err != nil {
		return nil, err
	}
	sec("cv_1_worker", one)
	sec("cv_all_workers", every)
	r.CVSpeedup = one.Seconds() / every.Seconds()
	d = nil

	// Epoch time per row over sizes.
	var perRow []float64
	for _, n := range sizes {
		if streamed(o, n) {
			t, err := diskEpochTime(o, opts, n)
			if err != nil {
				return nil, err
			}
			sec(fmt.Sprintf("epoch_n%d_disk", n), t)
			perRow = append(perRow, t.Seconds()/float64(n))
			r.StreamedSizes = append(r.StreamedSizes, n)
			continue
		}
		small, err := readDataset("linearity", syntheticCSV(shape{Rows: n, Columns: o.columns, Classes: o.classes, Seed: o.seed}))
		if err != nil {
			return nil, err
		}
		se, err := encodeAll(small, opts, false)
		if err != nil {
			return nil, err
		}
		t, _, err := trainTimes(se.store, small.Classes, len(small.Labels), o.epochs, o.seed)
		if err != nil {
			return nil, err
		}
		sec(fmt.Sprintf("epoch_n%d", n), t)
		perRow = append(perRow, t.Seconds()/float64(n))
	}
	r.Linearity = relativeSpread(perRow)

	// Peak RSS of a fit in a fresh process.
	peak, err := measureRSS(path, o)
	if err != nil {
		return nil, err
	}
	r.Times["rss_peak_bytes"] = float64(peak)
	r.RSSBytesPerRow = float64(peak) / float64(o.rows)

	// Peak RSS of fit --stream at the largest size.
	r.StreamRows = slices.Max(sizes)
	if bin := deltafitBinary(o.deltafit); bin != "" {
		streamPath := filepath.Join(dir, "stream.csv")
		if err := writeCSVFile(streamPath, shape{Rows: r.StreamRows, Columns: o.columns, Classes: o.classes, Seed: o.seed}); err != nil {
			return nil, err
		}
		peak, wall, err := streamRSS(bin, streamPath, o)
		if err != nil {
			return nil, err
		}
		os.Remove(streamPath)
		r.StreamRSSMB = float64(peak) / (1 << 20)
		sec("fit_stream", wall)
	}
	return r, nil
}

// writeCSVFile writes the synthetic table of shape s to path.
func writeCSVFile(path string, s shape) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := writeSyntheticCSV(f, s); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// measureRSS runs this program again to read, fit and encode the file at
// path, and returns the peak resident set the child reports.
func measureRSS(path string, o options) (int64, error) {
	self, err := os.Executable()
	if err != nil {
		return 0, err
	}
	peak, _, err := peakRSS(self, "-child-rss", path, "-encoding", o.encoding, "-seed", strconv.FormatUint(o.seed, 10))
	return peak, err
}

// childRSS reads the file at path, fits a plan and trains two epochs, the
// way deltafit fit holds a dataset in memory, then prints its peak
// resident set (getrusage ru_maxrss, in KiB on Linux) in bytes.
func childRSS(path string, opts encode.Options, w io.Writer) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	d, err := readDatasetFrom(path, f) // streamed from the file, as deltafit fit reads it
	f.Close()
	if err != nil {
		return err
	}
	learner := evaluate.Learner{Plan: opts, Fit: fit.Options{Epochs: 2, Stop: []fit.Converger{}}}
	if _, err := learner.Train(d, nil); err != nil {
		return err
	}
	var usage syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &usage); err != nil {
		return err
	}
	_, err = fmt.Fprintln(w, usage.Maxrss*1024)
	return err
}

// deltafitBinary returns the deltafit binary to measure: path when given,
// else deltafit beside this program, else on PATH; "" when there is none.
func deltafitBinary(path string) string {
	if path != "" {
		return path
	}
	if self, err := os.Executable(); err == nil {
		if p := filepath.Join(filepath.Dir(self), "deltafit"); fileExists(p) {
			return p
		}
	}
	if p, err := exec.LookPath("deltafit"); err == nil {
		return p
	}
	return ""
}

func fileExists(path string) bool {
	fi, err := os.Stat(path)
	return err == nil && fi.Mode().IsRegular()
}

// streamRSS runs deltafit fit --stream on the CSV at path for two epochs
// and returns its peak resident set in bytes and its wall time.
func streamRSS(bin, path string, o options) (int64, time.Duration, error) {
	return peakRSS(bin, "fit", path, "--target", targetColumn, "--stream", "--numeric", o.encoding,
		"--epochs", "2", "--seed", strconv.FormatUint(o.seed, 10), "-o", os.DevNull)
}

// peakRSS runs a command and returns its peak resident set in bytes and
// its wall time. The command is started by a small copy of this program
// (-child-exec), which reports the command's getrusage ru_maxrss: Linux
// starts the ru_maxrss of a process at the peak of the one that execs it,
// and Go starts commands from the parent's own memory, so a command
// started straight from this program, which holds the benchmark's data,
// would report this program's peak.
func peakRSS(name string, args ...string) (int64, time.Duration, error) {
	self, err := os.Executable()
	if err != nil {
		return 0, 0, err
	}
	cmd := exec.Command(self, append([]string{"-child-exec", "--", name}, args...)...)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	start := time.Now()
	out, err := cmd.Output()
	if err != nil {
		return 0, 0, fmt.Errorf("%s: %w: %s", name, err, stderr.String())
	}
	wall := time.Since(start)
	fields := strings.Fields(string(out))
	if len(fields) == 0 {
		return 0, 0, fmt.Errorf("%s: no peak resident set reported", name)
	}
	peak, err := strconv.ParseInt(fields[len(fields)-1], 10, 64)
	return peak, wall, err
}

// childExec runs args as a command, its output discarded, and prints the
// command's peak resident set (getrusage ru_maxrss, KiB on Linux) in
// bytes.
func childExec(args []string, w io.Writer) error {
	if len(args) == 0 {
		return errors.New("-child-exec: no command")
	}
	cmd := exec.Command(args[0], args[1:]...)
	cmd.Stdout, cmd.Stderr = io.Discard, os.Stderr
	if err := cmd.Run(); err != nil {
		return err
	}
	usage, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage)
	if !ok {
		return errors.New("no resource usage of the command")
	}
	_, err := fmt.Fprintln(w, usage.Maxrss*1024)
	return err
}

// streamed reports whether the linearity series times size n on a disk
// store: from -stream-from rows, or when an in-memory fit of n rows would
// need more than half the physical memory (at 1000 bytes a row, a little
// over what rss_bytes_per_row measures).
func streamed(o options, n int) bool {
	if o.streamFrom > 0 {
		return n >= o.streamFrom
	}
	var info syscall.Sysinfo_t
	if err := syscall.Sysinfo(&info); err != nil {
		return false
	}
	return float64(n)*1000 > float64(info.Totalram)*float64(info.Unit)/2
}

// cpuModel returns the first model name of /proc/cpuinfo, or "unknown".
func cpuModel() string {
	f, err := os.Open("/proc/cpuinfo")
	if err != nil {
		return "unknown"
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if name, value, ok := strings.Cut(sc.Text(), ":"); ok && strings.TrimSpace(name) == "model name" {
			return strings.TrimSpace(value)
		}
	}
	return "unknown"
}

// targets are the goals of each ratio: at most (true) or at least.
var targets = []struct {
	key    string
	goal   float64
	atMost bool
}{
	{"epoch_vs_stream", 2.0, true},
	{"blas_vs_epoch", 2.0, false},
	{"qr_vs_fit", 1.0, false},
	{"fixed_vs_epoch", 1.0, true},
	{"ingest_vs_arrow", 0.67, false},
	{"cv_speedup", 1.7, false},
	{"linearity", 0.10, true},
	{"rss_bytes_per_row", 100, true},
	{"stream_rss_mb", 512, true},
}

func printTable(w io.Writer, r *report) error {
	raw, err := json.Marshal(r)
	if err != nil {
		return err
	}
	var values map[string]any
	if err := json.Unmarshal(raw, &values); err != nil {
		return err
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "rows %d, columns %d, classes %d, encoding %s (%d units, packed %v)\n", r.Rows, r.Columns, r.Classes, r.Encoding, r.Units, r.Packed)
	fmt.Fprintf(tw, "%s, %d cores, GOMAXPROCS %d, %s %s\n\n", r.Machine.CPU, r.Machine.Cores, r.Machine.GOMAXPROCS, r.Machine.Go, r.Machine.OS)
	fmt.Fprintln(tw, "ratio\tmeasured\ttarget\tmet")
	for _, t := range targets {
		v := values[t.key].(float64)
		if t.key == "stream_rss_mb" && v == 0 {
			fmt.Fprintf(tw, "%s\tnot measured\t≤ %.2f\t\n", t.key, t.goal)
			continue
		}
		rel, met := "≥", v >= t.goal
		if t.atMost {
			rel, met = "≤", v <= t.goal
		}
		fmt.Fprintf(tw, "%s\t%.3f\t%s %.2f\t%v\n", t.key, v, rel, t.goal, met)
	}
	fmt.Fprintln(tw, "\ntime\tseconds\t\t")
	keys := make([]string, 0, len(r.Times))
	for k := range r.Times {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	for _, k := range keys {
		fmt.Fprintf(tw, "%s\t%.4g\t\t\n", k, r.Times[k])
	}
	fmt.Fprintf(tw, "fit to tolerance took %d epochs\n", r.ToleranceEpochs)
	if r.StreamRSSMB == 0 {
		fmt.Fprintln(tw, "stream_rss_mb not measured: no deltafit binary beside this program or on PATH (-deltafit)")
	} else {
		fmt.Fprintf(tw, "stream_rss_mb is of deltafit fit --stream on %d rows\n", r.StreamRows)
	}
	if len(r.StreamedSizes) > 0 {
		fmt.Fprintf(tw, "linearity sizes timed on a disk store (block-shuffled): %v\n", r.StreamedSizes)
	}
	return tw.Flush()
}
