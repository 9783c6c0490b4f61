// Package export hands results on: the model file, prediction and
// out-of-fold files, the reports of fit, evaluate, check and trace in text,
// Markdown or JSON (each with the settings its figures depend on), plots as
// PNG and SVG, and the one-page HTML report.
//
// It is the last stage of the pipeline ingest → encode → fit → evaluate →
// export. The classifier itself, and the scoring of rows, live in package
// model; export keeps file formats and provenance.
//
// Invariants that always hold:
//   - Regular files are written atomically: to a temporary file in the same
//     directory, synced, then renamed. A failed run leaves any previous file
//     as it was and no partial file behind; SIGINT and SIGTERM remove the
//     temporary file (CleanUpOnSignal). A writer killed outright leaves
//     its temporary file (.NAME.tmp-PID-RANDOM); the next successful write
//     of NAME removes those of processes that no longer run. Devices,
//     FIFOs, sockets and /dev/stdout-like paths are written through, never
//     replaced. New files follow the umask; existing ones keep their mode.
//   - Predictions written come from model.Classifier, which never returns a
//     NaN or infinite score: such a row is an error.
//   - The same model, options and seed give the same bytes: JSON keys are in
//     a fixed order and numbers are printed in their shortest exact form.
//   - A model file is checked (size cap, schema version, keys that repeat
//     or differ only in letter case, known rules and encodings, dimensions
//     within the caps, finite weights) before anything in it is used.
//   - In CSV output, a text cell that begins with =, +, -, @, a tab or a
//     carriage return and is not a decimal number is written with a '
//     before it, so that a spreadsheet does not run it as a formula
//     (CSVTextAsIs turns this off); numeric columns are never changed.
//   - The HTML report is one self-contained page: inline CSS and SVG, no
//     script, nothing fetched; every text from the data is escaped, in the
//     page and in the plots.
package export
