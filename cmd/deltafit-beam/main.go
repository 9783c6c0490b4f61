// Command deltafit-beam fits and cross-validates deltafit models as Apache
// Beam pipelines: on the in-process prism runner, or on a cluster through
// a portable runner's job endpoint (Flink, Spark). It writes the same
// model file and JSON report as deltafit fit.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
	_ "github.com/apache/beam/sdks/v2/go/pkg/beam/runners/flink"
	_ "github.com/apache/beam/sdks/v2/go/pkg/beam/runners/prism"
	_ "github.com/apache/beam/sdks/v2/go/pkg/beam/runners/spark"
	_ "github.com/apache/beam/sdks/v2/go/pkg/beam/runners/universal"
	"github.com/spf13/cobra"

	"deltafit/export"
)

// Exit codes, as deltafit's.
const (
	exitOK    = 0
	exitError = 1 // data or runtime error
	exitUsage = 2 // bad command line
)

const exitStatusHelp = `
Exit status: 0 ok, 1 data or runtime error, 2 usage error.`

// usageError marks an error in how the command was called.
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

func usagef(format string, args ...any) error {
	return usageError{fmt.Errorf(format, args...)}
}

func main() {
	if workerMode(os.Args[1:]) {
		// A runner started this binary as an SDK worker: Beam's own flags,
		// and Init runs the worker harness and exits.
		flag.Parse()
		beam.Init()
		return
	}
	export.CleanUpOnSignal()
	os.Exit(run(context.Background(), os.Args[1:], os.Stdout, os.Stderr))
}

// workerMode reports whether the arguments are those a runner gives an SDK
// worker.
func workerMode(args []string) bool {
	for _, a := range args {
		if a == "--worker" || a == "-worker" || strings.HasPrefix(a, "--worker=") || strings.HasPrefix(a, "-worker=") {
			return true
		}
	}
	return false
}

// run executes one command line and returns its exit code; it is the one
// place that maps errors to exit codes.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	root := newRootCmd(stdout, stderr)
	root.SetArgs(args)
	err := root.ExecuteContext(ctx)
	if err == nil {
		return exitOK
	}
	fmt.Fprintf(stderr, "deltafit-beam: %s\n", strings.ReplaceAll(err.Error(), "\n", " "))
	var ue usageError
	if errors.As(err, &ue) || strings.HasPrefix(err.Error(), "unknown command ") {
		return exitUsage
	}
	return exitError
}

func newRootCmd(stdout, stderr io.Writer) *cobra.Command {
	root := &cobra.Command{
		Use:   "deltafit-beam",
		Short: "Fit and cross-validate deltafit models as Apache Beam pipelines",
		Long: `deltafit-beam runs deltafit's fit and cross-validation as Apache Beam
pipelines, for data spread over many files or larger than one machine holds.
It takes deltafit fit's data, encoding and rule flags, reads CSV, Arrow IPC
and Parquet files (paths or glob patterns) with Beam's file IO, and writes
the same model file and JSON report. By default it runs on Beam's
in-process prism runner; --runner and --endpoint send the job to a cluster.
` + exitStatusHelp,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.SetOut(stdout)
	root.SetErr(stderr)
	root.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return usageError{err} })
	root.AddCommand(newFitCmd(false), newFitCmd(true))
	return root
}
