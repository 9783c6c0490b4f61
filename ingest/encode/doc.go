// Package encode turns feature columns into input units: a Plan, fitted on
// training rows, says how each column becomes units (thermometer or one-hot
// bins, a threshold, a standardized value, one unit per category, a flag),
// and encodes rows of any table with the same columns into patterns.
//
// A plan is fitted from per-column Summaries (FitPlan summarises rows in
// memory; PlanFromSummaries takes summaries made elsewhere, merged from
// shards or added batch by batch). A stream summary (NewStreamSummary)
// keeps a numeric column's values in a bounded Sketch whose quantiles are
// exact until it holds more values than its capacity and within a stated
// rank error after (Plan.QuantileRankError); the in-memory path keeps
// every value and its plans are exact.
//
// Invariants that always hold:
//   - A Plan is fitted only on the rows it is given: inside cross-validation
//     the caller passes the training fold, so nothing leaks from held-out
//     rows.
//   - Input tables are never modified by a Plan.
//   - Every unit a Plan produces has activity in [0,1], except the continuous
//     zscore encoding.
//   - The same Plan encodes the same cell to the same units, whatever table
//     or block of rows it comes in.
package encode
