package export

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"reflect"
	"slices"
	"strings"

	"deltafit/evaluate"
	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/ingest"
)

// Version is the tool's version, written into every model file.
const Version = "0.1.0"

// SchemaVersion is the model file's schema version. A reader accepts only
// the versions it knows.
const SchemaVersion = 1

// MaxModelBytes caps the size of a model file read by ReadModel.
const MaxModelBytes = 256 << 20

// Model is what a model file holds: everything needed to encode new rows
// exactly as the training rows were and to score them.
type Model struct {
	Schema int    `json:"schema_version"`
	Tool   string `json:"tool"`
	// The classifier's fields (target, labels, plan, network) are written
	// inline, in this place.
	model.Classifier
	Options  Options  `json:"options"`
	Training Training `json:"training"`
	Data     DataInfo `json:"data"`
}

// NewModel is the model file of a fitted classifier, on data of the given
// rows and sha256, with the options as the user gave them.
func NewModel(f *evaluate.Fitted, opts Options, data DataInfo) *Model {
	m := &Model{
		Schema:     SchemaVersion,
		Tool:       "deltafit " + Version,
		Classifier: *f.Classifier,
		Options:    opts,
		Training:   NewTraining(f.Result),
		Data:       data,
	}
	m.Training.Encoding = f.Encoding
	return m
}

// Options are the options a model was fitted with, as the user gave them.
// Model files written before decay, l2, batch, average, tolerance,
// holdout and patience existed lack those keys.
type Options struct {
	Rule      string  `json:"rule"`
	Unit      string  `json:"unit"`
	Epochs    int     `json:"epochs"`
	Rate      string  `json:"rate"` // "auto" or a number
	Decay     float64 `json:"decay"`
	L2        float64 `json:"l2"`
	Batch     bool    `json:"batch"`
	Average   bool    `json:"average"` // online weights averaged
	Tolerance float64 `json:"tolerance"`
	Holdout   float64 `json:"holdout"`
	Patience  int     `json:"patience"`
	// StopWhenSeparated stops training at the first epoch with no errors.
	StopWhenSeparated bool              `json:"stop_when_separated"`
	Numeric           string            `json:"numeric"`
	Categorical       string            `json:"categorical"`
	Seed              uint64            `json:"seed"`
	Ignore            []string          `json:"ignore"`
	Kinds             map[string]string `json:"kinds"`
	// Block is the rows per block of a block-shuffled visiting order
	// (fit.Options.Block; fits on data larger than memory); absent for
	// the full shuffle.
	Block int `json:"block,omitempty"`
}

// Training summarises the fit on all rows. Errors and Loss are those of
// the weights kept: of epoch KeptEpoch, the last one unless a holdout
// kept an earlier one. Model files written before the keys after trace_r
// (other than epochs, errors, loss, stop, history) existed lack them.
type Training struct {
	Rate      float64 `json:"rate"`
	RateAuto  bool    `json:"rate_auto"`
	LambdaMax float64 `json:"lambda_max"`
	TraceR    float64 `json:"trace_r"`
	RowMax    float64 `json:"row_max"` // largest ‖x̃‖² of a training row
	// RateBound is the stability bound the rate is held to, named by
	// RateBoundName (fit.BoundEveryRow, fit.BoundMean, fit.BoundNone) and
	// written out by RateBoundFormula.
	RateBound        float64 `json:"rate_bound"`
	RateBoundName    string  `json:"rate_bound_name"`
	RateBoundFormula string  `json:"rate_bound_formula"`
	Epochs           int     `json:"epochs"`
	Errors           int     `json:"errors"`
	Loss             float64 `json:"loss"`
	Stop             string  `json:"stop"`
	StopRule         string  `json:"stop_rule"` // the rule that stopped the run, in words
	KeptEpoch        int     `json:"kept_epoch"`
	// AverageFrom is the first epoch of the updates whose weights the
	// model averages, through KeptEpoch; 0 when they are not averaged.
	AverageFrom int              `json:"average_from"`
	HoldoutRows int              `json:"holdout_rows"`
	History     []fit.EpochStats `json:"history"`
	// Encoding says how an auto numeric encoding was chosen.
	Encoding *evaluate.EncodingChoice `json:"encoding_choice,omitempty"`
}

// DataInfo identifies the training data.
type DataInfo struct {
	Rows   int    `json:"rows"`
	SHA256 string `json:"sha256"` // of the input bytes as read
}

// NewTraining summarises a fit result.
func NewTraining(res *fit.Result) Training {
	t := Training{
		Rate:             res.Rate,
		RateAuto:         res.RateAuto,
		LambdaMax:        res.LambdaMax,
		TraceR:           res.TraceR,
		RowMax:           res.RowMax,
		RateBound:        res.Bound,
		RateBoundName:    res.BoundName,
		RateBoundFormula: res.BoundFormula,
		Epochs:           len(res.History),
		Stop:             res.Stop,
		StopRule:         res.StopRule,
		KeptEpoch:        res.Epoch,
		AverageFrom:      res.AverageFrom,
		HoldoutRows:      res.HoldoutRows,
		History:          fileHistory(res.History),
	}
	if k := res.Epoch; k > 0 && k <= len(res.History) {
		t.Errors = res.History[k-1].Errors
		t.Loss = res.History[k-1].Loss
	}
	return t
}

// fileHistory returns a copy of history as a model file holds it: without
// the best losses, which the file does not keep (fit.EpochStats).
func fileHistory(history []fit.EpochStats) []fit.EpochStats {
	out := slices.Clone(history)
	for i := range out {
		out[i].BestLoss, out[i].BestHoldoutLoss = 0, 0
	}
	return out
}

// WriteModel writes m as indented JSON, the bytes json.MarshalIndent with
// an indent of two spaces gives. The indented text is written as it is
// made, not held: a model of many inputs holds megabytes of weights.
func WriteModel(w io.Writer, m *Model) error {
	b, err := json.Marshal(m)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	writeIndented(bw, b)
	bw.WriteByte('\n')
	return bw.Flush()
}

// writeIndented writes compact JSON (as json.Marshal writes it: no space
// outside strings) to w indented as json.Indent indents it with no prefix
// and two spaces: a line per member and element, ": " after a key, and
// empty objects and arrays kept as {} and []. Errors are w's, which
// w.Flush reports.
func writeIndented(w *bufio.Writer, compact []byte) {
	depth := 0
	open := false // after { or [, whose first member may be its end
	inString, escaped := false, false
	newline := func() {
		w.WriteByte('\n')
		for range depth {
			w.WriteString("  ")
		}
	}
	for _, c := range compact {
		if inString {
			w.WriteByte(c)
			switch {
			case escaped:
				escaped = false
			case c == '\\':
				escaped = true
			case c == '"':
				inString = false
			}
			continue
		}
		if open && c != '}' && c != ']' {
			open = false
			depth++
			newline()
		}
		switch c {
		case '"':
			inString = true
			w.WriteByte(c)
		case '{', '[':
			open = true
			w.WriteByte(c)
		case ',':
			w.WriteByte(c)
			newline()
		case ':':
			w.WriteString(": ")
		case '}', ']':
			if open {
				open = false
			} else {
				depth--
				newline()
			}
			w.WriteByte(c)
		default:
			w.WriteByte(c)
		}
	}
}

// ErrModel is wrapped by every error about a model file's contents.
var ErrModel = errors.New("not a usable deltafit model")

// ReadModel reads and checks a model file. name is used in messages.
//
// Memory is bounded before anything is decoded: a regular file over
// MaxModelBytes is rejected from its size without being read, and other
// readers are read at most MaxModelBytes+1 bytes. Nothing is allocated from
// the dimensions the file declares; they are checked against the arrays it
// holds and the caps (encode.MaxWidth, encode.MaxCategories).
func ReadModel(name string, r io.Reader) (*Model, error) {
	if s, ok := r.(interface{ Stat() (fs.FileInfo, error) }); ok {
		if fi, err := s.Stat(); err == nil && fi.Mode().IsRegular() && fi.Size() > MaxModelBytes {
			return nil, fmt.Errorf("%s: %w: the file is larger than the cap of %d MiB", name, ErrModel, MaxModelBytes>>20)
		}
	}
	b, err := io.ReadAll(io.LimitReader(r, MaxModelBytes+1))
	if err != nil {
		return nil, fmt.Errorf("%s: cannot read the model: %w", name, err)
	}
	if len(b) > MaxModelBytes {
		return nil, fmt.Errorf("%s: %w: the file is larger than the cap of %d MiB", name, ErrModel, MaxModelBytes>>20)
	}
	if err := checkKeys(b); err != nil {
		return nil, fmt.Errorf("%s: %w: %w", name, ErrModel, err)
	}
	var head struct {
		Schema *int `json:"schema_version"`
	}
	if err := json.Unmarshal(b, &head); err != nil {
		return nil, fmt.Errorf("%s: %w: %v", name, ErrModel, describeJSONError(b, err))
	}
	switch {
	case head.Schema == nil:
		return nil, fmt.Errorf("%s: %w: it has no schema_version", name, ErrModel)
	case *head.Schema != SchemaVersion:
		return nil, fmt.Errorf("%s: %w: schema version %d is not %d, the one this deltafit %s reads", name, ErrModel, *head.Schema, SchemaVersion, Version)
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	var m Model
	if err := dec.Decode(&m); err != nil {
		return nil, fmt.Errorf("%s: %w: %v", name, ErrModel, describeJSONError(b, err))
	}
	if err := m.Validate(); err != nil {
		return nil, fmt.Errorf("%s: %w: %w", name, ErrModel, err)
	}
	return &m, nil
}

func describeJSONError(b []byte, err error) string {
	var se *json.SyntaxError
	if len(bytes.TrimSpace(b)) == 0 {
		return "the file is empty"
	}
	if errors.As(err, &se) && se.Offset >= int64(len(bytes.TrimRight(b, " \t\r\n"))) {
		return "the JSON ends early (is the file truncated?)"
	}
	if errors.As(err, &se) {
		line := 1 + bytes.Count(b[:min(int(se.Offset), len(b))], []byte("\n"))
		return fmt.Sprintf("invalid JSON at line %d: %v", line, se)
	}
	if errors.Is(err, io.ErrUnexpectedEOF) {
		return "the JSON ends early (is the file truncated?)"
	}
	var te *json.UnmarshalTypeError
	if errors.As(err, &te) {
		line := 1 + bytes.Count(b[:min(int(te.Offset), len(b))], []byte("\n"))
		field := strings.TrimPrefix(te.Field, "Classifier.") // the embedded classifier's fields are inline
		return fmt.Sprintf("line %d: %q holds %s, which is not %s", line, field, te.Value, jsonKind(te.Type))
	}
	return err.Error()
}

// Validate checks that the parts of a model agree with each other.
func (m *Model) Validate() error {
	switch {
	case m.Plan == nil:
		return errors.New("it has no encoding plan")
	case m.Network == nil:
		return errors.New("it has no network")
	case m.Target == "":
		return errors.New("it names no target column")
	case len(m.Labels) < 2:
		return fmt.Errorf("it has %d class labels, fewer than two", len(m.Labels))
	}
	sorted := slices.Clone(m.Labels)
	slices.Sort(sorted)
	if len(slices.Compact(sorted)) != len(m.Labels) {
		return errors.New("its class labels repeat")
	}
	if err := m.Plan.Validate(); err != nil {
		return err
	}
	if m.Network.Classes != len(m.Labels) {
		return fmt.Errorf("its network has %d classes but it lists %d labels", m.Network.Classes, len(m.Labels))
	}
	if m.Network.Inputs != m.Plan.Width() {
		return fmt.Errorf("its network has %d inputs but its plan makes %d", m.Network.Inputs, m.Plan.Width())
	}
	if err := model.CheckSize(m.Network.Classes, len(m.Plan.Features), m.Network.Inputs); err != nil {
		return err
	}
	if _, err := fit.RuleByName(m.Network.Rule); err != nil {
		return err
	}
	for i, l := range m.Labels {
		if len(l) > ingest.MaxCellBytes {
			return fmt.Errorf("class label %d is %d bytes, over the cell cap of %d", i+1, len(l), ingest.MaxCellBytes)
		}
	}
	return m.Network.Validate()
}

// jsonKind says in words what a value of type t must be in a model file.
func jsonKind(t reflect.Type) string {
	switch t.Kind() {
	case reflect.Int, reflect.Int64, reflect.Int32, reflect.Uint, reflect.Uint64, reflect.Uint32:
		return "a whole number in range"
	case reflect.Float64, reflect.Float32:
		return "a number within the range of a 64-bit float"
	case reflect.String:
		return "text"
	case reflect.Bool:
		return "true or false"
	case reflect.Slice:
		return "a list"
	}
	return "an object of the expected shape"
}
