package main

import (
	"errors"
	"fmt"
	"io"

	"github.com/spf13/pflag"

	"deltafit/export"
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

// load reads the model and then the data, read with the kinds the model's
// plan expects (a --kind flag still wins).
func (m *modelInput) load(path string, stdin io.Reader, stderr io.Writer) (*export.Model, *tabular.Table, string, error) {
	if m.model == "" {
		return nil, nil, "", usagef("--model is required: give a model file written by fit -o")
	}
	if m.model == "-" && path == "-" {
		return nil, nil, "", usagef("--model - and DATA - cannot both be stdin; give one of them as a file")
	}
	model, err := readModelFile(m.model, stdin)
	if err != nil {
		return nil, nil, "", err
	}
	readOpts, err := m.input.readOptions()
	if err != nil {
		return nil, nil, "", err
	}
	readOpts.Expected = model.Plan.Kinds()
	readOpts.Target = model.Target
	table, sha, err := readTable(path, stdin, stderr, readOpts)
	if err != nil {
		return nil, nil, "", err
	}
	return model, table, sha, nil
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
