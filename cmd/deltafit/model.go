package main

import (
	"fmt"
	"io"
	"os"
	"sort"

	"github.com/spf13/pflag"

	"deltafit/export"
	"deltafit/ingest"
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
func (m *modelInput) load(path string, stdin io.Reader, stderr io.Writer) (*export.Model, *ingest.Table, string, error) {
	if m.model == "" {
		return nil, nil, "", usagef("--model is required: give a model file written by fit -o")
	}
	var modelFile io.Reader = stdin
	if m.model == "-" && path == "-" {
		return nil, nil, "", usagef("--model - and DATA - cannot both be stdin; give one of them as a file")
	}
	if m.model != "-" {
		f, err := os.Open(m.model)
		if err != nil {
			return nil, nil, "", fmt.Errorf("cannot open the model: %w", err)
		}
		defer f.Close()
		modelFile = f
	}
	model, err := export.ReadModel(ingest.DisplayName(m.model), modelFile)
	if err != nil {
		return nil, nil, "", fmt.Errorf("%w; fit a new model with deltafit fit -o", err)
	}
	readOpts, err := m.input.readOptions()
	if err != nil {
		return nil, nil, "", err
	}
	readOpts.Expected = model.Plan.Kinds()
	table, sha, err := readTable(path, stdin, stderr, readOpts)
	if err != nil {
		return nil, nil, "", err
	}
	return model, table, sha, nil
}

// checkEncoding reports what the model's plan met that it was not fitted
// on: one warning line per column on stderr, or with --strict an error
// naming the first such cell.
func (m *modelInput) checkEncoding(stderr io.Writer, name string, stats ingest.EncodeStats) error {
	for _, kind := range []struct {
		cells map[string]ingest.Surprise
		warn  string
		fail  string
	}{
		{stats.Other, "values the model has no unit for (unseen or rare in training), sent to the other unit",
			"the model has no unit for this value (unseen or rare in training)"},
		{stats.MissingNoUnit, "missing cells, which the training data never had, encoded with every unit off",
			"the cell is missing, which the training data never was here"},
	} {
		cols := make([]string, 0, len(kind.cells))
		for c := range kind.cells {
			cols = append(cols, c)
		}
		sort.Strings(cols)
		for _, c := range cols {
			s := kind.cells[c]
			if m.strict {
				return &ingest.DataError{File: name, Row: s.FirstRow, Name: c,
					Err: fmt.Errorf("%s; cells like it in the column: %d; --strict refuses them (without it they are a warning)", kind.fail, s.Count)}
			}
			fmt.Fprintf(stderr, "deltafit: warning: %s: column %s: %s: %d (first at row %d)\n", ingest.DisplayName(name), c, kind.warn, s.Count, s.FirstRow)
		}
	}
	return nil
}
