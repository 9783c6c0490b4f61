package main

import (
	"fmt"
	"runtime"
	"runtime/debug"

	"github.com/spf13/cobra"

	"deltafit/export"
)

func newVersionCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "version",
		Short: "Print the version",
		Long: `Version prints deltafit's version, the model file schema version, the Go
version, and the module version and version-control revision the binary
was built from (from its build information; "unknown" when it was built
without them, as by go run or go test). deltafit --version prints the same.
` + exitStatusHelp,
		RunE: func(cmd *cobra.Command, _ []string) error {
			_, err := fmt.Fprintln(cmd.OutOrStdout(), versionLine())
			return err
		},
	}
}

// versionLine is what version and --version print.
func versionLine() string {
	info, _ := debug.ReadBuildInfo()
	return versionFrom(info)
}

// versionFrom is the version line of a binary with build information info
// (nil if it has none).
func versionFrom(info *debug.BuildInfo) string {
	module, revision := "unknown", "unknown"
	if info != nil {
		if v := info.Main.Version; v != "" {
			module = v
		}
		modified := false
		for _, s := range info.Settings {
			switch s.Key {
			case "vcs.revision":
				revision = s.Value
			case "vcs.modified":
				modified = s.Value == "true"
			}
		}
		if modified && revision != "unknown" {
			revision += " (modified)"
		}
	}
	return fmt.Sprintf("deltafit %s (model schema %d, %s; module %s, revision %s)",
		export.Version, export.SchemaVersion, runtime.Version(), module, revision)
}
