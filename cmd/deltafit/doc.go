// Command deltafit fits single-layer error-driven linear classifiers (the
// delta rule) to tabular data, cross-validates them against simple
// baselines and hands the model and its predictions on.
//
// Commands: fit, evaluate, predict, encode, export, check, report, trace,
// demo, selfcheck, version and completion, one file each (and the hidden
// __commands, which prints the tree for cmd/deltafit-docs). A command's
// RunE only calls its runX(ctx, opts, ..., stdout, stderr); the work is
// done in ingest, fit, evaluate and export.
//
// Invariants:
//   - run in main.go is the one place that maps errors to exit codes: 0 ok,
//     1 data or runtime error, 2 usage error (usageError, and cobra's flag
//     and argument errors), others through exitCodeError (check's gate, 3
//     and 4); SIGINT and SIGTERM end the run with 130 and 143 after
//     removing any temporary output file.
//   - Every command's help ends with its exit status: the commands end
//     their long help with exitStatusHelp, and exitStatusLast moves it
//     after the flags.
//   - Progress bars go to stderr, only when it is a terminal (progress.go).
//   - Results go to stdout, diagnostics to stderr as one line each; output
//     files are written through export.WriteFile, so never partially.
package main
