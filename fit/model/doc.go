// Package model holds a fitted classifier — the class labels of a target
// column, the encoding plan that turns a table's feature columns into input
// patterns, and the network that scores them — and the one path by which
// rows are scored: cross-validation, predict, evaluate, the demo and the
// selfcheck all score through Classifier.Predict.
//
// Invariants that always hold:
//   - Rows are encoded a block at a time, so scoring holds at most about a
//     million encoded values whatever the number of rows.
//   - A returned score is never NaN or infinite: a row whose scores are not
//     finite is an error naming the row.
//   - The predicted class of a row is the arg max of its scores, ties going
//     to the lowest class index (fit.Network decides).
//   - Scoring never modifies the table, the plan or the network.
package model
