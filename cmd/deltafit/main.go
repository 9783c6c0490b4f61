package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/spf13/cobra"

	"deltafit/export"
)

// Exit codes, documented in every command's help.
const (
	exitOK    = 0
	exitError = 1 // data or runtime error
	exitUsage = 2 // bad command line
)

const exitStatusHelp = `
Exit status: 0 ok, 1 data or runtime error, 2 usage error; 130 (SIGINT) or
143 (SIGTERM) when a signal ended the run, after removing any partial output.`

// usageError marks an error in how the command was called.
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

func usagef(format string, args ...any) error {
	return usageError{fmt.Errorf(format, args...)}
}

// exitCodeError carries an exit code other than 1 for a result that is not
// an error, such as a failed gate. An empty msg prints nothing.
type exitCodeError struct {
	code int
	msg  string
}

func (e exitCodeError) Error() string { return e.msg }

func main() {
	export.CleanUpOnSignal()
	os.Exit(run(context.Background(), os.Args[1:], os.Stdin, os.Stdout, os.Stderr))
}

// run executes one command line and returns its exit code. It is the one
// place that maps errors to exit codes.
func run(ctx context.Context, args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	root := newRootCmd(stdin, stdout, stderr)
	root.SetArgs(args)
	err := root.ExecuteContext(ctx)
	if err == nil {
		return exitOK
	}
	msg := strings.ReplaceAll(err.Error(), "\n", " ")
	var ec exitCodeError
	if errors.As(err, &ec) {
		if ec.msg != "" {
			fmt.Fprintf(stderr, "deltafit: %s\n", msg)
		}
		return ec.code
	}
	fmt.Fprintf(stderr, "deltafit: %s\n", msg)
	var ue usageError
	// cobra reports an unknown subcommand with a plain error of this form.
	if errors.As(err, &ue) || strings.HasPrefix(err.Error(), "unknown command ") {
		return exitUsage
	}
	return exitError
}

func newRootCmd(stdin io.Reader, stdout, stderr io.Writer) *cobra.Command {
	root := &cobra.Command{
		Use:   "deltafit",
		Short: "Fit single-layer delta-rule classifiers to tables",
		Long: `deltafit fits single-layer error-driven linear classifiers to tabular data
with the delta rule (Widrow-Hoff, LMS): Δw = rate · (target − output) · input.
It reads CSV, Arrow IPC and Parquet, encodes columns into input units,
cross-validates against majority-class and Hebbian baselines, and writes a
model file that predict and evaluate use on new rows.
` + exitStatusHelp,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.SetIn(stdin)
	root.SetOut(stdout)
	root.SetErr(stderr)
	root.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return usageError{err} })
	root.Version = versionLine()
	root.SetVersionTemplate("{{.Version}}\n")
	var quiet bool
	root.PersistentFlags().BoolVarP(&quiet, "quiet", "q", false, "print nothing on stderr but errors: no warnings, no progress (fit -o - then prints no report)")
	root.PersistentPreRun = func(cmd *cobra.Command, _ []string) {
		if quiet {
			cmd.SetErr(io.Discard)
		}
	}
	root.AddCommand(
		newFitCmd(),
		newEvaluateCmd(),
		newPredictCmd(),
		newEncodeCmd(),
		newExportCmd(),
		newDemoCmd(),
		newCheckCmd(),
		newReportCmd(),
		newTraceCmd(),
		newSelfcheckCmd(),
		newVersionCmd(),
	)
	root.AddCommand(newCompletionCmd(), newCommandsCmd())
	for _, c := range root.Commands() {
		c.Args = usageArgs(c.Args)
	}
	exitStatusLast(root)
	addCompletions(root)
	return root
}

// exitStatusLast moves each command's exit status from the end of its
// long description (where the commands put exitStatusHelp) to the end of
// its help, after the flags: the help template prints the annotation
// exitStatusKey last, or exitStatusHelp for a command without one (help).
func exitStatusLast(root *cobra.Command) {
	root.SetHelpTemplate(`{{with (or .Long .Short)}}{{. | trimTrailingWhitespaces}}

{{end}}{{if or .Runnable .HasSubCommands}}{{.UsageString}}{{end}}
{{with index .Annotations "` + exitStatusKey + `"}}{{.}}{{else}}` + strings.TrimSpace(exitStatusHelp) + `{{end}}
`)
	var move func(c *cobra.Command)
	move = func(c *cobra.Command) {
		if before, after, ok := strings.Cut(c.Long, exitStatusHelp); ok {
			if c.Annotations == nil {
				c.Annotations = map[string]string{}
			}
			c.Long = strings.TrimRight(before, "\n") + "\n"
			c.Annotations[exitStatusKey] = strings.TrimSpace(exitStatusHelp + after)
		}
		for _, sub := range c.Commands() {
			move(sub)
		}
	}
	move(root)
}

// exitStatusKey is the annotation that holds a command's exit status.
const exitStatusKey = "exit-status"

// usageArgs makes argument-count errors usage errors.
func usageArgs(check cobra.PositionalArgs) cobra.PositionalArgs {
	if check == nil {
		check = cobra.NoArgs
	}
	return func(cmd *cobra.Command, args []string) error {
		if err := check(cmd, args); err != nil {
			if strings.Contains(cmd.Use, "DATA") {
				return usagef("%s takes one DATA argument, a path or - for stdin; got %d", cmd.Name(), len(args))
			}
			return usageError{err}
		}
		return nil
	}
}
