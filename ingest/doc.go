// Package ingest reads tables and turns their columns into input units.
//
// It is the first stage of the pipeline ingest → fit → evaluate → export.
// Readers stream Arrow record batches from CSV, Arrow IPC (file and stream)
// and Parquet; Collect gathers batches into a Table of typed columns;
// NewDataset picks the target column and its class labels; and a Plan (the
// binarizer) encodes feature columns into input patterns.
//
// Invariants that always hold:
//   - Row numbers in errors and results are 1-based data rows: the first row
//     after a CSV header is row 1.
//   - Input tables are never modified by a Plan.
//   - A Plan is fitted only on the rows it is given: inside cross-validation
//     the caller passes the training fold, so nothing leaks from held-out rows.
//   - Every unit a Plan produces has activity in [0,1], except the continuous
//     zscore encoding, which is offered for comparison only.
//   - Data errors carry position as a *DataError (file, row, column).
package ingest
