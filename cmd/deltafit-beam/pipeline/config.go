package pipeline

import (
	"errors"
	"fmt"
	"math"

	"deltafit/fit"
	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// Training modes of a pipeline fit.
const (
	// ModeBatch is full-batch gradient descent: per epoch one Combine of
	// the update sums over all rows, applied once. It equals fit.Train
	// with Options.Batch epoch by epoch (see the package doc for the
	// summation order).
	ModeBatch = "batch"
	// ModeAveraged is parameter mixing: each block of rows runs one
	// online delta-rule epoch from the epoch's starting weights, and the
	// blocks' weights are averaged by row count (Zinkevich et al. 2010;
	// McDonald et al. 2010).
	ModeAveraged = "averaged"
)

// Config is what a pipeline run needs to know. It travels inside the
// pipeline's functions, so every field is plain data.
type Config struct {
	// Files are the input files: their paths and, parallel to them, their
	// keys (the path below the root of the pattern that matched it),
	// which name the rows for the folds and order the blocks.
	Paths, Keys []string

	// Reading, as ingest.ReadOptions.
	Format    string            // auto, csv, arrow or parquet
	Delimiter string            // one character; "" means ','
	Missing   []string          // extra cell texts read as missing
	Kinds     map[string]string // declared column kinds
	BlockRows int               // rows per block; 0 means DefaultBlockRows

	Target      string
	Ignore      []string
	DropMissing bool // leave out rows with a missing cell (--missing drop)

	Numeric     string // numeric encoding, as --numeric; "" means hybrid:8
	Categorical string // as --categorical; "" means onehot:1
	// SketchCapacity, when positive, is the capacity per level of the
	// quantile sketches of numeric columns (encode.NewSketch); 0 keeps
	// every present value, for exact cuts at 8 bytes a cell.
	SketchCapacity int

	Rule      string  // delta or hebbian
	Unit      string  // logistic or linear
	Epochs    int     // most epochs; 0 means fit.DefaultEpochs
	Rate      float64 // 0 means automatic
	Tolerance float64 // of the loss-change stop rule; 0 means fit.DefaultTolerance
	KeepGoing bool    // do not stop at zero training errors
	L2        float64 // weight decay λ (fit.Options.L2)
	Decay     float64 // the rate of epoch e is Rate/(1 + Decay·(e−1)) (fit.Options.Decay)
	Seed      uint64  // of the folds and the averaged mode's row orders
	Mode      string  // ModeBatch (default) or ModeAveraged

	// Folds, when 2 or more, adds a cross-validation with that many
	// stratified folds (see foldOf).
	Folds int
	// Trace keeps every model's weights after each epoch in the state
	// (ModelState.Trace), for checking a run epoch by epoch.
	Trace bool
	// Work is the directory (any Beam filesystem) the run's result is
	// written to, for the driver to read back.
	Work string
}

func (c *Config) blockRows() int {
	if c.BlockRows > 0 {
		return c.BlockRows
	}
	return DefaultBlockRows
}

func (c *Config) epochs() int {
	if c.Epochs > 0 {
		return c.Epochs
	}
	return fit.DefaultEpochs
}

func (c *Config) mode() string {
	if c.Mode == "" {
		return ModeBatch
	}
	return c.Mode
}

// Errors of Check that the driver fills in after checking the flags.
var (
	ErrNoFiles = errors.New("pipeline: no input files")
	ErrNoWork  = errors.New("pipeline: no work directory for the result")
)

// Check reports the first option that cannot be used, as an error a user
// can act on.
func (c *Config) Check() error {
	if c.Target == "" {
		return errors.New("pipeline: no target column")
	}
	if _, err := c.readOptions(); err != nil {
		return err
	}
	if _, err := c.encodeOptions(); err != nil {
		return err
	}
	if _, _, err := c.rule(); err != nil {
		return err
	}
	switch {
	case c.Epochs < 0:
		return fmt.Errorf("pipeline: %d epochs; give at least 1", c.Epochs)
	case math.IsNaN(c.Rate) || math.IsInf(c.Rate, 0) || c.Rate < 0:
		return fmt.Errorf("pipeline: learning rate %v: give a positive number, or 0 for automatic", c.Rate)
	case c.Folds == 1 || c.Folds < 0:
		return fmt.Errorf("pipeline: %d folds: give 0 for no cross-validation, or at least 2", c.Folds)
	case c.mode() != ModeBatch && c.mode() != ModeAveraged:
		return fmt.Errorf("pipeline: unknown training mode %q (want batch or averaged)", c.Mode)
	case len(c.Paths) == 0 || len(c.Paths) != len(c.Keys):
		return ErrNoFiles
	case c.Work == "":
		return ErrNoWork
	}
	return nil
}

func (c *Config) readOptions() (ingest.ReadOptions, error) {
	opts := ingest.ReadOptions{Missing: c.Missing, BatchRows: c.blockRows()}
	format, err := ingest.ParseFormat(c.Format)
	if err != nil {
		return opts, err
	}
	opts.Format = format
	if c.Delimiter != "" {
		r := []rune(c.Delimiter)
		if len(r) != 1 {
			return opts, fmt.Errorf("pipeline: delimiter %q: give one character", c.Delimiter)
		}
		opts.Delimiter = r[0]
	}
	kinds, err := parseKinds(c.Kinds)
	if err != nil {
		return opts, err
	}
	opts.Kinds = kinds
	return opts, nil
}

// parseKinds parses column kinds by name; nil for none.
func parseKinds(names map[string]string) (map[string]tabular.Kind, error) {
	if len(names) == 0 {
		return nil, nil
	}
	kinds := make(map[string]tabular.Kind, len(names))
	for col, name := range names {
		k, err := tabular.ParseKind(name)
		if err != nil {
			return nil, err
		}
		kinds[col] = k
	}
	return kinds, nil
}

func (c *Config) encodeOptions() (encode.Options, error) {
	var opts encode.Options
	var err error
	numeric := c.Numeric
	if numeric == "" {
		numeric = "hybrid:8"
	}
	if opts.Numeric, err = encode.ParseNumericEncoding(numeric); err != nil {
		return opts, err
	}
	if opts.Numeric.Method == encode.Auto {
		return opts, fmt.Errorf("pipeline: numeric encoding %q: the automatic choice tries each candidate on an inner split of the training rows, which a pipeline run does not make; give the encoding (hybrid:K, thermometer:K, onehot:K, threshold, zscore or minmax)", numeric)
	}
	categorical := c.Categorical
	if categorical == "" {
		categorical = "onehot:1"
	}
	if opts.Categorical, err = encode.ParseCategoricalEncoding(categorical); err != nil {
		return opts, err
	}
	return opts, nil
}

// rule returns the learning rule and the output unit it trains.
func (c *Config) rule() (fit.Rule, fit.Unit, error) {
	name := c.Rule
	if name == "" {
		name = fit.Delta{}.Name()
	}
	rule, err := fit.RuleByName(name)
	if err != nil {
		return nil, 0, err
	}
	unitName := c.Unit
	if unitName == "" {
		unitName = "logistic"
	}
	unit, err := fit.ParseUnit(unitName)
	if err != nil {
		return nil, 0, err
	}
	if fixed, ok := rule.(fit.OutputUnit); ok {
		unit = fixed.OutputUnit()
	}
	return rule, unit, nil
}

// stopRules are the stop rules fit.Train uses by default with the same
// options (fit.DefaultStop).
func (c *Config) stopRules() []fit.Converger {
	return fit.DefaultStop(fit.Options{KeepGoing: c.KeepGoing, Tolerance: c.Tolerance})
}

// FitOptions are the options of fit.Train that train as a pipeline run in
// batch mode does, for comparing the two.
func (c *Config) FitOptions() (fit.Options, error) {
	rule, unit, err := c.rule()
	if err != nil {
		return fit.Options{}, err
	}
	return fit.Options{
		Rule: rule, Unit: unit, Epochs: c.epochs(), Rate: c.Rate,
		Tolerance: c.Tolerance, KeepGoing: c.KeepGoing, Seed: c.Seed, L2: c.L2, Decay: c.Decay,
		Batch: c.mode() == ModeBatch, Stop: c.stopRules(),
		// Parameter mixing averages the blocks' last iterates, not one
		// run's iterates over its last epochs.
		LastIterate: c.mode() == ModeAveraged,
	}, nil
}
