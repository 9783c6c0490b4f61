package main

import (
	"context"
	"fmt"
	"io"

	"github.com/olekukonko/tablewriter"
	"github.com/olekukonko/tablewriter/tw"
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
	cmd.Flags().StringVar(&opts.format, "format", "text", "report format: text or json")
	return cmd
}

func runSelfcheck(_ context.Context, opts selfcheckOptions, stdout io.Writer) error {
	format, err := export.ParseFormat(opts.format)
	if err != nil || format == export.Markdown {
		return usagef("--format %q: give text or json", opts.format)
	}
	cases, err := reference.Run()
	if err != nil {
		return fmt.Errorf("selfcheck could not compute a case: %w", err)
	}
	failed := 0
	for _, c := range cases {
		if !c.Pass {
			failed++
		}
	}
	if format == export.JSON {
		err = export.WriteJSON(stdout, map[string]any{"cases": cases, "failed": failed})
	} else {
		err = writeCases(stdout, cases)
	}
	if err != nil {
		return err
	}
	if failed > 0 {
		return fmt.Errorf("%d of %d reference cases failed", failed, len(cases))
	}
	return nil
}

func writeCases(w io.Writer, cases []reference.Case) error {
	t := tablewriter.NewTable(w,
		tablewriter.WithHeaderAutoFormat(tw.Off),
		tablewriter.WithRendition(tw.Rendition{Symbols: tw.NewSymbols(tw.StyleASCII)}))
	t.Header("case", "source", "expected", "got", "pass")
	for _, c := range cases {
		pass := "yes"
		if !c.Pass {
			pass = "NO"
		}
		if err := t.Append(c.Name, c.Source, c.Expected, c.Got, pass); err != nil {
			return err
		}
	}
	return t.Render()
}
