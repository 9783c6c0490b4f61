package main

import (
	"fmt"
	"io"
	"os"
	"sort"

	"deltafit/export"
	"deltafit/ingest"
)

// modelInput are the flags of the commands that apply a saved model.
type modelInput struct {
	input inputFlags
	model string
}

// load reads the model and then the data, read with the kinds the model's
// plan expects (a --kind flag still wins).
func (m *modelInput) load(path string, stdin io.Reader) (*export.Model, *ingest.Table, string, error) {
	if m.model == "" {
		return nil, nil, "", usagef("--model is required: give a model file written by fit -o")
	}
	f, err := os.Open(m.model)
	if err != nil {
		return nil, nil, "", fmt.Errorf("cannot open the model: %w", err)
	}
	defer f.Close()
	model, err := export.ReadModel(m.model, f)
	if err != nil {
		return nil, nil, "", fmt.Errorf("%w; fit a new model with deltafit fit -o", err)
	}
	readOpts, err := m.input.readOptions()
	if err != nil {
		return nil, nil, "", err
	}
	readOpts.Expected = model.Plan.Kinds()
	table, sha, err := readTable(path, stdin, readOpts)
	if err != nil {
		return nil, nil, "", err
	}
	return model, table, sha, nil
}

// warnEncoding tells on stderr what the model's plan met that it was not
// fitted on, one line per column.
func warnEncoding(stderr io.Writer, name string, stats ingest.EncodeStats) {
	report := func(counts map[string]int, what string) {
		cols := make([]string, 0, len(counts))
		for c := range counts {
			cols = append(cols, c)
		}
		sort.Strings(cols)
		for _, c := range cols {
			fmt.Fprintf(stderr, "deltafit: warning: %s: column %s: %d %s\n", displayName(name), c, counts[c], what)
		}
	}
	report(stats.Other, "values the model has no unit for (unseen or rare in training) went to the other unit")
	report(stats.MissingNoUnit, "missing cells, which the training data never had, were encoded with every unit off")
}

func displayName(path string) string {
	if path == "-" {
		return "stdin"
	}
	return path
}
