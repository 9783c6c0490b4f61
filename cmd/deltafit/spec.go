package main

import (
	"encoding/json"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"deltafit/internal/cmdspec"
)

// newCommandsCmd is the hidden command that prints the command tree as
// JSON (internal/cmdspec), from which cmd/deltafit-docs makes the man
// pages.
func newCommandsCmd() *cobra.Command {
	return &cobra.Command{
		Use:    "__commands",
		Short:  "Print the command tree as JSON, for the documentation generator",
		Long:   "__commands prints deltafit's commands, help texts and flags as JSON, for cmd/deltafit-docs.\n" + exitStatusHelp,
		Hidden: true,
		Args:   cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			b, err := json.MarshalIndent(commandSpec(cmd.Root()), "", "  ")
			if err != nil {
				return err
			}
			_, err = cmd.OutOrStdout().Write(append(b, '\n'))
			return err
		},
	}
}

// commandSpec describes c and its visible subcommands.
func commandSpec(c *cobra.Command) cmdspec.Command {
	spec := cmdspec.Command{
		Name: c.Name(), Use: c.Use, Short: c.Short, Long: c.Long, Example: c.Example,
		ExitStatus: c.Annotations[exitStatusKey], Runnable: c.Runnable(),
		Flags: flagSpecs(c.LocalNonPersistentFlags()), Persistent: flagSpecs(c.PersistentFlags()),
	}
	for _, sub := range c.Commands() {
		if sub.IsAvailableCommand() && sub.Name() != "help" {
			spec.Commands = append(spec.Commands, commandSpec(sub))
		}
	}
	return spec
}

func flagSpecs(fs *pflag.FlagSet) []cmdspec.Flag {
	var flags []cmdspec.Flag
	fs.VisitAll(func(f *pflag.Flag) {
		if f.Hidden || f.Deprecated != "" || f.Name == "help" || f.Name == "version" {
			return
		}
		flags = append(flags, cmdspec.Flag{Name: f.Name, Shorthand: f.Shorthand, Usage: f.Usage,
			Type: f.Value.Type(), Default: f.DefValue, NoOptDefVal: f.NoOptDefVal})
	})
	return flags
}
