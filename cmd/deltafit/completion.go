package main

import (
	"os"
	"slices"
	"strings"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"deltafit/ingest"
)

func newCompletionCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "completion bash|zsh|fish",
		Short: "Print a shell completion script",
		Long: `Completion prints a script that makes the shell complete deltafit's
commands, flags and flag values. --target, --ignore, --keep and --kind
complete with the column names in the header of the DATA file already on
the command line; --format, --numeric, --rule and the like with their
values; --model with .json files.

  bash:  source <(deltafit completion bash)       (needs bash-completion)
  zsh:   deltafit completion zsh > "${fpath[1]}/_deltafit"
  fish:  deltafit completion fish > ~/.config/fish/completions/deltafit.fish
` + exitStatusHelp,
		ValidArgs: []string{"bash", "zsh", "fish"},
		Args:      cobra.MatchAll(cobra.ExactArgs(1), cobra.OnlyValidArgs),
		RunE: func(cmd *cobra.Command, args []string) error {
			root, out := cmd.Root(), cmd.OutOrStdout()
			switch args[0] {
			case "bash":
				return root.GenBashCompletionV2(out, true)
			case "zsh":
				return root.GenZshCompletion(out)
			}
			return root.GenFishCompletion(out, true)
		},
	}
}

// flagValues are the values a flag takes, by flag name, for completion;
// format depends on the command (formatValues).
var flagValues = map[string][]string{
	"input-format": {"auto", "csv", "arrow", "parquet"},
	"numeric":      {"auto", "thermometer", "onehot", "threshold", "zscore", "minmax", "hybrid"},
	"categorical":  {"onehot"},
	"rule":         {"delta", "hebbian"},
	"unit":         {"logistic", "linear"},
	"missing":      {"indicator", "drop"},
	"scores":       {scoresRaw, scoresNormalized},
	"space":        {"encoded", "raw"},
	"require":      {"separable"},
	"to":           exportFormats,
	"inputs":       {"encoded", "columns"},
	"delimiter":    {",", ";", "tab", "|"},
	"rate":         {"auto"},
}

// formatValues are the values of --format of a command.
func formatValues(cmd *cobra.Command) []string {
	switch cmd.Name() {
	case "predict":
		return []string{"csv", "jsonl", "arrow", "parquet"}
	case "encode":
		return []string{"csv", "jsonl", "arrow", "parquet", "text", "json", "markdown"}
	}
	return []string{"text", "json", "markdown"}
}

// columnFlags complete with column names of the DATA file.
var columnFlags = []string{"target", "ignore", "keep", "kind"}

// addCompletions registers the completion of flag values on every command
// under root that has the flags.
func addCompletions(root *cobra.Command) {
	var walk func(c *cobra.Command)
	walk = func(c *cobra.Command) {
		c.LocalFlags().VisitAll(func(f *pflag.Flag) {
			var complete cobra.CompletionFunc
			switch name := f.Name; {
			case slices.Contains(columnFlags, name):
				complete = completeColumns(name)
			case name == "format":
				complete = fixedValues(formatValues(c))
			case name == "model":
				complete = cobra.FixedCompletions([]string{"json"}, cobra.ShellCompDirectiveFilterFileExt)
			case flagValues[name] != nil:
				complete = fixedValues(flagValues[name])
			default:
				return
			}
			// An error means the flag has a completion already: keep it.
			_ = c.RegisterFlagCompletionFunc(f.Name, complete)
		})
		for _, sub := range c.Commands() {
			walk(sub)
		}
	}
	walk(root)
}

func fixedValues(values []string) cobra.CompletionFunc {
	return cobra.FixedCompletions(values, cobra.ShellCompDirectiveNoFileComp)
}

// completeColumns completes flag with the column names in the header of
// the DATA argument, read with the command's --delimiter and
// --input-format. --ignore and --keep take lists, whose last name is
// completed; --kind takes COLUMN=KIND.
func completeColumns(flag string) cobra.CompletionFunc {
	return func(cmd *cobra.Command, args []string, toComplete string) ([]cobra.Completion, cobra.ShellCompDirective) {
		if len(args) == 0 || args[0] == "-" {
			return nil, cobra.ShellCompDirectiveNoFileComp
		}
		names := headerNames(cmd, args[0])
		prefix, last := "", toComplete
		if flag == "ignore" || flag == "keep" {
			if i := strings.LastIndexByte(toComplete, ','); i >= 0 {
				prefix, last = toComplete[:i+1], toComplete[i+1:]
			}
		}
		var out []cobra.Completion
		if flag == "kind" {
			if col, kind, ok := strings.Cut(toComplete, "="); ok {
				for _, k := range []string{"numeric", "categorical", "boolean"} {
					if strings.HasPrefix(k, kind) {
						out = append(out, col+"="+k)
					}
				}
				return out, cobra.ShellCompDirectiveNoFileComp
			}
			for _, n := range names {
				if strings.HasPrefix(n, toComplete) {
					out = append(out, n+"=")
				}
			}
			return out, cobra.ShellCompDirectiveNoFileComp | cobra.ShellCompDirectiveNoSpace
		}
		chosen := strings.Split(prefix, ",")
		for _, n := range names {
			if strings.HasPrefix(n, last) && !slices.Contains(chosen, n) {
				out = append(out, prefix+n)
			}
		}
		directive := cobra.ShellCompDirectiveNoFileComp
		if prefix != "" || flag != "target" {
			directive |= cobra.ShellCompDirectiveNoSpace // a list may go on
		}
		return out, directive
	}
}

// headerNames returns the column names of the data file at path, or none
// if it cannot be read.
func headerNames(cmd *cobra.Command, path string) []string {
	var in inputFlags
	in.delimiter, _ = cmd.Flags().GetString("delimiter")
	in.format, _ = cmd.Flags().GetString("input-format")
	if in.delimiter == "" {
		in.delimiter = ","
	}
	opts, err := in.readOptions()
	if err != nil {
		return nil
	}
	f, err := os.Open(path)
	if err != nil {
		return nil
	}
	defer f.Close()
	opts.Source = inPlace(f)
	rr, err := ingest.NewRecordReader(path, f, opts)
	if err != nil {
		return nil
	}
	defer rr.Release()
	var names []string
	for _, field := range rr.Schema().Fields() {
		names = append(names, field.Name)
	}
	return names
}
