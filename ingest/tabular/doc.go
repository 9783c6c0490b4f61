// Package tabular holds tables in memory as typed columns, and datasets: a
// table with a chosen target column, its class labels and its feature
// columns. It needs only the standard library, so the stages after ingest
// (encode, fit, evaluate) work on tables without linking any file reader.
//
// Invariants that always hold:
//   - Row numbers in errors are 1-based data rows: the first row after a CSV
//     header is row 1.
//   - Every column of a Table has Table.Rows cells; a missing cell is marked
//     in Column.Missing and holds the zero value.
//   - A Dataset's labels are sorted (numerically when every label is a
//     number), so class indices do not depend on row order.
//   - Data errors carry position as a *DataError (file, row, column).
package tabular
