package main

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"deltafit/evaluate"
	"deltafit/export"
	"deltafit/fit"
	"deltafit/ingest"
	"deltafit/ingest/tabular"
	"deltafit/internal/demo"
)

type demoOptions struct {
	format string
}

func newDemoCmd() *cobra.Command {
	var opts demoOptions
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Run the whole job on the embedded demo data (invented)",
		Long: `Demo runs the whole job on the embedded demo table, an invented kiln log of a
community pottery studio (360 pieces: clay body, glaze coat, temperatures,
wall thickness, humidity, some cells missing; outcome sound, cracked or
bloated). It fits the delta rule with the default settings, runs 10-fold
stratified cross-validation with seed 1, and prints the confusion table and
the majority-class and Hebbian baselines. The data is invented for showing
the tool and says nothing about real kilns.
` + exitStatusHelp,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			return runDemo(cmd.Context(), opts, cmd.OutOrStdout())
		},
	}
	cmd.Flags().StringVar(&opts.format, "format", "text", "report format: text, json or markdown")
	return cmd
}

func runDemo(ctx context.Context, opts demoOptions, stdout io.Writer) error {
	format, err := reportFormat(opts.format)
	if err != nil {
		return err
	}
	table, err := ingest.ReadTable(demo.Name, bytes.NewReader(demo.CSV), ingest.ReadOptions{})
	if err != nil {
		return err
	}
	d, err := tabular.NewDataset(table, demo.Target, []string{demo.Ignore})
	if err != nil {
		return err
	}
	const folds, seed = 10, 1
	learner := evaluate.Learner{Fit: fit.Options{Rule: fit.Delta{}, Seed: seed}}
	s, err := evaluate.RunStudy(ctx, d, learner, evaluate.StudyOptions{Folds: folds, Seed: seed})
	if err != nil {
		return err
	}
	sum := sha256.Sum256(demo.CSV)
	sha := hex.EncodeToString(sum[:])
	report := export.NewFitReport(s, d, sha, seed, "")
	if format == export.Text {
		fmt.Fprintf(stdout, "demo data: %s, an invented kiln log (see deltafit demo --help); target %s, ignoring %s\n\n", demo.Name, demo.Target, demo.Ignore)
	}
	return export.WriteFitReport(stdout, format, report)
}
