package main

import (
	"fmt"
	"runtime"

	"github.com/spf13/cobra"

	"deltafit/export"
)

func newVersionCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "version",
		Short: "Print the version",
		Long:  "Version prints deltafit's version, the model file schema version and the Go version.\n" + exitStatusHelp,
		RunE: func(cmd *cobra.Command, _ []string) error {
			_, err := fmt.Fprintf(cmd.OutOrStdout(), "deltafit %s (model schema %d, %s)\n", export.Version, export.SchemaVersion, runtime.Version())
			return err
		},
	}
}
