package main

import (
	"bytes"
	"context"
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"
)

// check's gate is a contract: exit 3 when --require separable fails.
func TestCheckExitCodes(t *testing.T) {
	data := func(name string) string { return filepath.Join("..", "..", "testdata", name) }
	for _, tc := range []struct {
		name string
		args []string
		code int
		err  string // substring of the one stderr line
	}{
		{"xor report", []string{"check", data("xor.csv"), "--target", "y"}, 0, ""},
		{"xor gated", []string{"check", data("xor.csv"), "--target", "y", "--require", "separable"}, exitNotSeparable, "1 against 0 (not separable)"},              // Minsky & Papert 1969
		{"and gated", []string{"check", data("and.csv"), "--target", "y", "--require", "separable"}, 0, ""},                                                        // Minsky & Papert 1969
		{"iris raw gated", []string{"check", data("iris.csv"), "--target", "species", "--space", "raw", "--require", "separable"}, exitNotSeparable, "versicolor"}, // UCI iris.names
		// Iris raw (UCI iris.names): setosa is separable; with a budget of
		// one pivot the two other splits are undecided, which fails the
		// gate with its own code.
		{"iris raw out of budget gated", []string{"check", data("iris.csv"), "--target", "species", "--space", "raw", "--budget", "1", "--require", "separable"}, exitUndecided, "versicolor against rest (undecided (budget))"},
		{"budget not positive", []string{"check", data("iris.csv"), "--target", "species", "--budget", "0"}, exitUsage, "--budget"},
		{"bad split", []string{"check", data("iris.csv"), "--target", "species", "--split", "setosa"}, exitUsage, "--split"},
		{"unknown split class", []string{"check", data("iris.csv"), "--target", "species", "--split", "setosa,rose"}, exitUsage, `"rose" is not a class`},
		{"unknown positive class", []string{"check", data("iris.csv"), "--target", "species", "--positive", "rose"}, exitUsage, "--positive"},
		{"missing drop needs raw", []string{"check", data("iris.csv"), "--target", "species", "--missing", "drop"}, exitUsage, "--missing drop is for --space raw"},
		{"bad space", []string{"check", data("iris.csv"), "--target", "species", "--space", "latent"}, exitUsage, "--space"},
		{"bad requirement", []string{"check", data("iris.csv"), "--target", "species", "--require", "perfect"}, exitUsage, "--require"},
		{"no target", []string{"check", data("iris.csv")}, exitUsage, "--target"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			code := run(context.Background(), tc.args, strings.NewReader(""), &stdout, &stderr)
			if code != tc.code {
				t.Fatalf("exit code %d, want %d; stderr: %s", code, tc.code, stderr.String())
			}
			if !strings.Contains(stderr.String(), tc.err) || (tc.err == "") != (stderr.Len() == 0) {
				t.Errorf("stderr %q, want one line containing %q", stderr.String(), tc.err)
			}
		})
	}
}

// The JSON keys the issue names are read by pipelines.
func TestCheckJSONFields(t *testing.T) {
	var stdout, stderr bytes.Buffer
	args := []string{"check", filepath.Join("..", "..", "testdata", "iris.csv"), "--target", "species", "--space", "raw", "--format", "json"}
	if code := run(context.Background(), args, strings.NewReader(""), &stdout, &stderr); code != 0 {
		t.Fatalf("exit code %d: %s", code, stderr.String())
	}
	var doc struct {
		Splits []struct {
			Positive    *string `json:"positive"`
			Negative    *string `json:"negative"`
			Separable   *bool   `json:"separable"`
			Certificate *struct {
				Rows     []int     `json:"rows"`
				Weights  []float64 `json:"weights"`
				Residual *float64  `json:"residual"`
			} `json:"certificate"`
			Witness *struct {
				Weights []float64 `json:"weights"`
				Bias    *float64  `json:"bias"`
				Margin  *float64  `json:"margin"`
			} `json:"witness"`
		} `json:"splits"`
		Conflicts struct {
			Groups     []json.RawMessage `json:"groups"`
			ErrorFloor *float64          `json:"error_floor"`
		} `json:"conflicts"`
	}
	if err := json.Unmarshal(stdout.Bytes(), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Splits) != 3 || doc.Conflicts.Groups == nil || doc.Conflicts.ErrorFloor == nil {
		t.Fatalf("splits %d, conflicts %+v; want 3 splits and conflicts.groups, conflicts.error_floor", len(doc.Splits), doc.Conflicts)
	}
	for _, s := range doc.Splits {
		if s.Positive == nil || s.Negative == nil || s.Separable == nil {
			t.Fatalf("split lacks positive, negative or separable: %+v", s)
		}
		if *s.Separable {
			if s.Witness == nil || len(s.Witness.Weights) != 4 || s.Witness.Bias == nil || s.Witness.Margin == nil {
				t.Errorf("%s: separable without witness.weights, bias and margin", *s.Positive)
			}
		} else if c := s.Certificate; c == nil || len(c.Rows) == 0 || len(c.Rows) != len(c.Weights) || c.Residual == nil {
			t.Errorf("%s: not separable without certificate.rows, weights and residual", *s.Positive)
		}
	}
}
