package pipeline

import (
	"crypto/sha256"
	"encoding/hex"
	"strings"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/fit"
	"deltafit/fit/model"
	"deltafit/ingest/tabular"
)

// Fitted returns the model trained on every row, as evaluate.Learner.Train
// returns it.
func (s *State) Fitted() *evaluate.Fitted {
	m := s.Models[0]
	return &evaluate.Fitted{
		Classifier: &model.Classifier{Target: s.Target, Labels: s.Labels, Plan: s.Plans[0], Network: m.Network},
		Result: &fit.Result{
			Network: m.Network, Rate: m.Rate, RateAuto: m.RateAuto,
			LambdaMax: m.LambdaMax, TraceR: m.TraceR, History: m.History,
			Stop: m.Stop, StopRule: m.StopRule, Epoch: len(m.History),
		},
	}
}

// SHA256 is the sha256 of the input bytes: of the file for one file, as
// deltafit fit gives it; for several, the sha256 of their "sha256  key"
// lines (the sha256sum format) in key order.
func (s *State) SHA256() string {
	if len(s.Files) == 1 {
		return s.Files[0].SHA256
	}
	var b strings.Builder
	for _, f := range s.Files {
		b.WriteString(f.SHA256 + "  " + f.Key + "\n")
	}
	sum := sha256.Sum256([]byte(b.String()))
	return hex.EncodeToString(sum[:])
}

// Model returns the model file of the fit on every row, with the options
// as the user gave them.
func (s *State) Model(opts export.Options) *export.Model {
	return export.NewModel(s.Fitted(), opts, export.DataInfo{Rows: s.Rows, SHA256: s.SHA256()})
}

// Report returns the report deltafit fit gives, with the cross-validation
// when the run made one. source names the data; modelPath is where the
// model file was written, "" for none.
func (s *State) Report(source string, opts export.Options, modelPath string) *export.FitReport {
	m := s.Model(opts)
	plan := s.Plans[0]
	r := &export.FitReport{
		Data: export.DataSummary{
			Source: tabular.DisplayName(source), SHA256: m.Data.SHA256, Rows: s.Rows,
			Features: len(s.Features), Inputs: plan.Width(),
			Target: s.Target, Labels: s.Labels, ClassCounts: s.ClassCounts,
		},
		Plan:     export.NewPlanSummary(plan, nil),
		Training: export.NewTrainingSummary(m),
		Model:    modelPath,
	}
	if s.Scores != nil {
		main, majority, hebbian := s.Scores.CVResults(m.Network.Rule)
		r.CV = export.NewCVReport(opts.Seed, main, majority, hebbian)
	}
	return r
}
