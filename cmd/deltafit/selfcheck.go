package main

import (
	"context"
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"deltafit/export"
	"deltafit/internal/reference"
)

type selfcheckOptions struct {
	format string
}

func newSelfcheckCmd() *cobra.Command {
	var opts selfcheckOptions
	cmd := &cobra.Command{
		Use:   "selfcheck",
		Short: "Recompute the built-in reference cases and compare with the literature",
		Long: `Selfcheck recomputes results the literature states — Iris summary
statistics and separability (UCI iris.names), XOR, AND and OR (Minsky &
Papert 1969), least-squares agreement of batch LMS (Widrow & Hoff 1960) —
on data embedded in the binary, and prints case, source, expected, got and
pass for each. It exits 1 if any case fails.
` + exitStatusHelp,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			return runSelfcheck(cmd.Context(), opts, cmd.OutOrStdout())
		},
	}
	cmd.Flags().StringVar(&opts.format, "format", "text", "report format: text, json or markdown")
	return cmd
}

func runSelfcheck(_ context.Context, opts selfcheckOptions, stdout io.Writer) error {
	format, err := reportFormat(opts.format)
	if err != nil {
		return err
	}
	cases, err := reference.Run()
	if err != nil {
		return fmt.Errorf("selfcheck could not compute a case: %w", err)
	}
	report := export.NewSelfcheckReport(cases)
	if err := export.WriteSelfcheckReport(stdout, format, report); err != nil {
		return err
	}
	if report.Failed > 0 {
		return fmt.Errorf("%d of %d reference cases failed", report.Failed, len(cases))
	}
	return nil
}
