// Package ingest reads tables: CSV, Arrow IPC (file and stream) and Parquet,
// from a path or stdin, as streams of Arrow record batches.
//
// It is the first stage of the pipeline ingest → encode → fit → evaluate →
// export. Readers stream Arrow record batches; Collect gathers batches into
// a tabular.Table of typed columns. The table types (package tabular) and
// the encoding plan (package encode) need only the standard library, so
// only this package links arrow-go.
//
// Invariants that always hold:
//   - Row numbers in errors and results are 1-based data rows: the first row
//     after a CSV header is row 1.
//   - Memory is bounded before anything is allocated from a size the input
//     declares (Arrow metadata, header and cell lengths).
//   - Data errors carry position as a *tabular.DataError (file, row, column).
package ingest
