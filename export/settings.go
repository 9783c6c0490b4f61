package export

import (
	"encoding/json"
	"fmt"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"

	"deltafit/fit"
	"deltafit/ingest/encode"
)

// Settings say how a report's figures were made: the data, the encoding
// and every option, so that two saved reports can be compared line by line.
type Settings struct {
	Tool   string `json:"tool"`   // the deltafit that wrote the report
	Data   string `json:"data"`   // the data file as given; "-" is stdin
	SHA256 string `json:"sha256"` // of the data's bytes as read
	Rows   int    `json:"rows"`   // rows used
	Target string `json:"target"`
	// Encoding is each feature column's encoding as fitted on all rows.
	Encoding []ColumnPlan `json:"encoding"`
	// Options are the options of the fit as the user gave them; for
	// evaluate, those the model file records.
	Options  Options `json:"options"`
	StopRule string  `json:"stop_rule"` // when training stops, in words
	// Stopped says why the fit on all rows ended, and after how many epochs.
	Stopped  string `json:"stopped"`
	Folds    int    `json:"folds"`   // 0: no cross-validation
	Repeats  int    `json:"repeats"` // of the cross-validation
	Positive string `json:"positive,omitempty"`
	// Model is the model file evaluated, ModelTool the deltafit that wrote
	// it and ModelData the sha256 of the data it was trained on (evaluate).
	Model     string `json:"model,omitempty"`
	ModelTool string `json:"model_tool,omitempty"`
	ModelData string `json:"model_data_sha256,omitempty"`
}

// Tool is this deltafit's name and version, as reports and model files give it.
func Tool() string { return "deltafit " + Version }

// NewSettings gathers the settings of a fit of the data at path (sha256
// sha, rows rows) with plan, training record t, the options as the user
// gave them (opts) and as the trainer took them (fitOpts, for the stop
// rule). Folds and Repeats are left for the caller: 0 and 1, none.
func NewSettings(path, sha string, rows int, target string, plan *encode.Plan, opts Options, t Training, fitOpts fit.Options) Settings {
	return Settings{
		Tool:     Tool(),
		Data:     path,
		SHA256:   sha,
		Rows:     rows,
		Target:   target,
		Encoding: NewPlanSummary(plan, nil).Columns,
		Options:  opts,
		StopRule: StopRule(fitOpts),
		Stopped:  stopped(t),
		Repeats:  1,
	}
}

// ModelSettings are the settings of an evaluation of the model at
// modelPath on the data at path (sha256 sha, rows rows scored).
func ModelSettings(m *Model, modelPath, path, sha string, rows int) Settings {
	s := Settings{
		Tool:      Tool(),
		Data:      path,
		SHA256:    sha,
		Rows:      rows,
		Target:    m.Target,
		Encoding:  NewPlanSummary(m.Plan, nil).Columns,
		Options:   m.Options,
		StopRule:  modelStopRule(m.Options),
		Stopped:   stopped(m.Training),
		Repeats:   1,
		Model:     modelPath,
		ModelTool: m.Tool,
		ModelData: m.Data.SHA256,
	}
	return s
}

func stopped(t Training) string {
	if t.Stop == "" {
		return ""
	}
	if t.StopRule != "" && t.StopRule != t.Stop && t.Stop != fit.StopEpochs && t.Stop != fit.StopOnePass {
		return fmt.Sprintf("%s (%s), after %s", t.Stop, t.StopRule, count(t.Epochs, "epoch"))
	}
	return fmt.Sprintf("%s, after %s", t.Stop, count(t.Epochs, "epoch"))
}

// StopRule says in words when training with o stops: each stop rule's
// String, or for o.Stop nil the rules fit.Options sets by default (no
// training errors unless KeepGoing, then the plateau of the best loss,
// on the held-out rows with a holdout), and the epoch limit; a one-pass
// rule stops after its pass.
func StopRule(o fit.Options) string {
	if op, ok := o.Rule.(fit.OnePass); ok && op.OnePass() {
		return "one pass over the rows (the rule's update does not depend on the weights)"
	}
	stop := o.Stop
	if stop == nil {
		stop = fit.DefaultStop(o)
	}
	var rules []string
	for _, rule := range stop {
		if s, ok := rule.(fmt.Stringer); ok {
			rules = append(rules, s.String())
		} else {
			rules = append(rules, fmt.Sprintf("%T", rule))
		}
	}
	epochs := o.Epochs
	if epochs <= 0 {
		epochs = fit.DefaultEpochs
	}
	return strings.Join(append(rules, "at most "+count(epochs, "epoch")), "; or ")
}

// modelStopRule is StopRule for the options a model file records.
func modelStopRule(o Options) string {
	rule, err := fit.RuleByName(o.Rule)
	if err != nil {
		return ""
	}
	return StopRule(fit.Options{Rule: rule, Epochs: o.Epochs, KeepGoing: !o.StopWhenSeparated,
		Tolerance: o.Tolerance, Patience: o.Patience, Holdout: o.Holdout})
}

// settings prints the settings, one per line, as a table.
func (p *printer) settings(s Settings) {
	p.subheading("settings")
	p.table([]string{"setting", "value"}, settingRows(s), nil)
}

// settingRows lists the settings as (name, value) rows.
func settingRows(s Settings) [][]string {
	rows := [][]string{
		{"tool", s.Tool},
		{"data", s.Data},
		{"sha256", s.SHA256},
		{"rows used", strconv.Itoa(s.Rows)},
		{"target", s.Target},
	}
	for _, c := range s.Encoding {
		encoding := c.Encoding
		if c.Missing {
			encoding += " + missing"
		}
		rows = append(rows, []string{"encoding of " + c.Column, fmt.Sprintf("%s, %s", encoding, count(c.Units, "unit"))})
	}
	rows = append(rows, optionRows(s.Options)...)
	rows = append(rows,
		[]string{"stop rule", s.StopRule},
		[]string{"stopped", s.Stopped},
		[]string{"folds", strconv.Itoa(s.Folds)},
		[]string{"repeats", strconv.Itoa(s.Repeats)},
	)
	if s.Positive != "" {
		rows = append(rows, []string{"positive class", s.Positive})
	}
	if s.Model != "" {
		rows = append(rows, []string{"model", s.Model}, []string{"model written by", s.ModelTool}, []string{"model data sha256", s.ModelData})
	}
	return rows
}

// optionRows lists the options by their JSON names, in the order of the
// struct, each value as the model file writes it.
func optionRows(o Options) [][]string {
	var rows [][]string
	v := reflect.ValueOf(o)
	for i := range v.NumField() {
		name, flags, _ := strings.Cut(v.Type().Field(i).Tag.Get("json"), ",")
		if name == "" || name == "-" || (strings.Contains(flags, "omitempty") && v.Field(i).IsZero()) {
			continue // the model file leaves it out too
		}
		rows = append(rows, []string{"option " + name, optionValue(v.Field(i).Interface())})
	}
	return rows
}

// optionValue writes an option's value: text as it is, a list or a map as
// comma-separated items ("none" when empty), anything else as JSON.
func optionValue(v any) string {
	switch x := v.(type) {
	case string:
		return x
	case []string:
		if len(x) == 0 {
			return "none"
		}
		return strings.Join(x, ", ")
	case map[string]string:
		if len(x) == 0 {
			return "none"
		}
		keys := make([]string, 0, len(x))
		for k := range x {
			keys = append(keys, k)
		}
		slices.Sort(keys)
		for i, k := range keys {
			keys[i] = k + "=" + x[k]
		}
		return strings.Join(keys, ", ")
	}
	b, err := json.Marshal(v)
	if err != nil {
		return fmt.Sprint(v)
	}
	return string(b)
}

// FormatOfPath returns the report format a file name asks for by its
// extension: .txt or .text, .md or .markdown, .json, .html or .htm.
func FormatOfPath(path string) (Format, error) {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".txt", ".text":
		return Text, nil
	case ".md", ".markdown":
		return Markdown, nil
	case ".json":
		return JSON, nil
	case ".html", ".htm":
		return HTML, nil
	}
	return "", fmt.Errorf("export: %s: the report format is read from the extension: .txt, .md, .json or .html", path)
}
