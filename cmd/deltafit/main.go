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
	root.AddCommand(
		newFitCmd(),
		newEvaluateCmd(),
		newPredictCmd(),
		newExportCmd(),
		newDemoCmd(),
		newCheckCmd(),
		newReportCmd(),
		newTraceCmd(),
		newSelfcheckCmd(),
		newVersionCmd(),
	)
	for _, c := range root.Commands() {
		c.Args = usageArgs(c.Args)
	}
	return root
}

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
