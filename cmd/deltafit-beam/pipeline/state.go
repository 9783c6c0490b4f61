package pipeline

import (
	"encoding/json"
	"fmt"
	"math"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/ingest/encode"
)

// State is what the stages of a run hand on, a singleton side input of
// each pass: the data's shape, the encoding plans and every model being
// trained. The last state is the run's result.
type State struct {
	// Err, when set, is the error that ended the run (a data error names
	// file, row and column); later stages pass the state on untouched.
	Err string `json:"error,omitempty"`

	Target   string            `json:"target"`
	Labels   []string          `json:"labels"`
	Features []string          `json:"features"`
	Kinds    map[string]string `json:"kinds"` // every column but the target, as read
	// ClassCounts and Rows count the rows kept; NoTarget and Dropped the
	// rows left out (Warnings says where).
	ClassCounts []int    `json:"class_counts"`
	Rows        int      `json:"rows"`
	NoTarget    int      `json:"no_target"`
	Dropped     int      `json:"dropped"`
	Warnings    []string `json:"warnings,omitempty"`
	// Files are the input files' keys and sha256, in key order.
	Files []FileInfo `json:"files"`

	// Plans are the encoding plans: Plans[0] fitted on every row, and with
	// K folds Plans[k] on the rows outside fold k.
	Plans []*encode.Plan `json:"plans"`
	// Models are trained side by side (see modelList).
	Models []*ModelState `json:"models"`
	// Passes counts the passes over the data so far.
	Passes int `json:"passes"`
	// Scores are the out-of-fold confusion tables, after the scoring pass.
	Scores *FoldScores `json:"scores,omitempty"`
}

// FileInfo identifies an input file.
type FileInfo struct {
	Key    string `json:"key"`
	SHA256 string `json:"sha256"`
	Rows   int    `json:"rows"` // read, kept or not
}

// Model kinds.
const (
	KindMain    = "main"    // the configured rule and mode
	KindHebbian = "hebbian" // the Hebbian baseline: one pass, linear outputs
)

// ModelState is one model being trained: on every row (Fold 0) or on the
// rows outside fold Fold (1-based).
type ModelState struct {
	Kind string `json:"kind"`
	Fold int    `json:"fold"`
	Plan int    `json:"plan"` // index into State.Plans
	// TrainRows counts the training rows; Majority is their most frequent
	// class (ties to the lowest index).
	TrainRows int `json:"train_rows"`
	Majority  int `json:"majority"`

	Network   *fit.Network     `json:"network"`
	RateSet   bool             `json:"rate_set"`
	Rate      float64          `json:"rate"`
	RateAuto  bool             `json:"rate_auto"`
	LambdaMax float64          `json:"lambda_max"`
	TraceR    float64          `json:"trace_r"`
	Updates   int              `json:"updates"` // epochs applied
	History   []fit.EpochStats `json:"history"`
	Stop      string           `json:"stop"`
	StopRule  string           `json:"stop_rule,omitempty"`
	Done      bool             `json:"done"`
	// Trace holds the weights and biases after each epoch, with
	// Config.Trace.
	Trace []Weights `json:"trace,omitempty"`
}

// Weights are a network's weights and biases at one epoch.
type Weights struct {
	Weights [][]float64 `json:"weights"`
	Biases  []float64   `json:"biases"`
}

// FoldScores are the out-of-fold confusion tables of a cross-validation,
// per fold and pooled, for the main model and its baselines.
type FoldScores struct {
	Main, Majority, Hebbian             []*evaluate.Confusion // per fold
	PooledMain, PooledMajority, PooledH *evaluate.Confusion
}

// rule returns the model's learning rule.
func (m *ModelState) rule(c *Config) (fit.Rule, error) {
	if m.Kind == KindHebbian {
		return fit.Hebbian{}, nil
	}
	rule, _, err := c.rule()
	return rule, err
}

// onePass reports whether the model's rule makes one pass (fit.OnePass).
func (m *ModelState) onePass(c *Config) bool {
	rule, err := m.rule(c)
	if err != nil {
		return false
	}
	op, ok := rule.(fit.OnePass)
	return ok && op.OnePass()
}

// inTraining reports whether a row in fold (0-based; -1 without folds)
// trains the model.
func (m *ModelState) inTraining(fold int) bool {
	return m.Fold == 0 || fold != m.Fold-1
}

// newNetwork returns the zero network of a model with the given rule and
// unit, as fit.Train starts it.
func newNetwork(rule fit.Rule, unit fit.Unit, inputs, classes int) *fit.Network {
	if fixed, ok := rule.(fit.OutputUnit); ok {
		unit = fixed.OutputUnit()
	}
	units := classes
	if classes == 2 {
		units = 1
	}
	net := &fit.Network{
		Rule: rule.Name(), Unit: unit, Inputs: inputs, Classes: classes,
		On: rule.Target(true), Off: rule.Target(false),
		Weights: make([][]float64, units), Biases: make([]float64, units),
	}
	for j := range net.Weights {
		net.Weights[j] = make([]float64, inputs)
	}
	return net
}

// allDone reports whether every model is trained.
func (s *State) allDone() bool {
	for _, m := range s.Models {
		if !m.Done {
			return false
		}
	}
	return true
}

// finite reports whether the network's weights and biases are all finite.
func finiteNetwork(net *fit.Network) bool {
	for _, w := range net.Weights {
		for _, v := range w {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return false
			}
		}
	}
	for _, v := range net.Biases {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

func encodeState(s *State) ([]byte, error) {
	b, err := json.Marshal(s)
	if err != nil {
		return nil, fmt.Errorf("pipeline: state: %w", err)
	}
	return b, nil
}

func decodeState(b []byte) (*State, error) {
	var s State
	if err := json.Unmarshal(b, &s); err != nil {
		return nil, fmt.Errorf("pipeline: state: %w", err)
	}
	return &s, nil
}

// failed returns a state that carries only err.
func failed(err error) *State { return &State{Err: err.Error()} }
