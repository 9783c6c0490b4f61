package main

import (
	"errors"
	"fmt"
	"io"

	"github.com/spf13/pflag"

	"deltafit/export"
	"deltafit/ingest"
	"deltafit/ingest/encode"
	"deltafit/ingest/tabular"
)

// modelInput are the flags of the commands that apply a saved model.
type modelInput struct {
	input  inputFlags
	model  string
	strict bool
}

func (m *modelInput) add(fs *pflag.FlagSet) {
	m.input.add(fs)
	fs.StringVar(&m.model, "model", "", "model file written by fit -o, or - for stdin when DATA is a file (required)")
	fs.BoolVar(&m.strict, "strict", false, "refuse cells the model was not trained on (unseen categories, missing cells) instead of warning")
}

// readModel checks the flags and reads the model, returning it with the
// options that read data with the kinds its plan expects (a --kind flag
// still wins).
func (m *modelInput) readModel(path string, stdin io.Reader) (*export.Model, ingest.ReadOptions, error) {
	if m.model == "" {
		return nil, ingest.ReadOptions{}, usagef("--model is required: give a model file written by fit -o")
	}
	if m.model == "-" && path == "-" {
		return nil, ingest.ReadOptions{}, usagef("--model - and DATA - cannot both be stdin; give one of them as a file")
	}
	readOpts, err := m.input.readOptions()
	if err != nil {
		return nil, readOpts, err
	}
	model, err := readModelFile(m.model, stdin)
	if err != nil {
		return nil, readOpts, err
	}
	readOpts.Expected = model.Plan.Kinds()
	readOpts.Target = model.Target
	return model, readOpts, nil
}

// checkStrict refuses, with --strict, the first cell of stats that the
// plan was not fitted on; without it, it does nothing (the warnings come
// once, at the end, from checkEncoding).
func (m *modelInput) checkStrict(name string, stats encode.Stats) error {
	if !m.strict {
		return nil
	}
	return m.checkEncoding(io.Discard, name, stats)
}

// checkEncoding reports what the model's plan met that it was not fitted
// on: one warning line per column on stderr, or with --strict an error
// naming the first such cell.
func (m *modelInput) checkEncoding(stderr io.Writer, name string, stats encode.Stats) error {
	warnings, err := stats.Check(name, m.strict)
	var de *tabular.DataError
	if errors.As(err, &de) {
		de.Err = fmt.Errorf("%w; --strict refuses them (without it they are a warning)", de.Err)
	}
	if err != nil {
		return err
	}
	for _, w := range warnings {
		fmt.Fprintf(stderr, "deltafit: warning: %s\n", w)
	}
	return nil
}
