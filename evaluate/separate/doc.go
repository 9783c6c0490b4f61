// Package separate decides whether a single layer can classify a dataset
// without error, and proves the answer.
//
// For two sets of rows, the positive and the negative side of a split, a
// hyperplane w·x + b puts every positive row strictly above it and every
// negative row strictly below it exactly when the convex hulls of the two
// sides do not meet (Farkas' lemma, the theorem of the alternative).
// Separate finds either a Certificate, rows from each side with convex
// weights whose weighted means coincide, or a Witness hyperplane.
//
// It collapses repeated patterns (a pattern on both sides is a certificate
// of two rows at once), leaves out the inputs that do not vary on the
// split's rows, and tries a few passes of the perceptron's error-correction
// procedure (Rosenblatt 1958) for a witness. The rest is one linear
// program, the L1 distance between the hulls, with D+2 rows for D varying
// inputs however many rows the data has, solved by the package's own
// revised simplex (simplex.go): Devex pricing, a perturbed right-hand side
// against the degeneracy of 0/1 patterns, and a dual cleanup. For large
// splits the program grows a working set of rows from the rows the last
// hyperplane misplaced, warm-starting from the last basis. A certificate
// is reduced to rows whose weights are unique (Carathéodory: at most D+2),
// and a smaller one is looked for among the rows nearest its heaviest rows
// (shrink.go).
//
// Work is counted in simplex pivots, never in time: past Options.Budget a
// split is OutOfBudget, with what was learned. A context that ends makes
// it OutOfTime. Above MaxInputs varying inputs the program is not solved
// (TooManyInputs), unless a pattern on both sides proves the split.
//
// Check works on a whole tabular.Dataset: each class against the rest
// (and, with Pairs, each pair of classes; or one chosen split), in the
// encoded input space or in the standardized raw numeric columns; it also
// finds conflicting rows (one pattern, several classes) with the error
// floor they impose on any classifier, and profiles the columns, counting
// duplicate rows (same features, same class). The raw space names the
// feature columns it leaves out (not numeric, or not varying) and why, and
// can leave out rows with missing cells (MissingDrop).
//
// Invariants that always hold:
//   - Every reported proof has been checked against the data by
//     VerifyCertificate or VerifyWitness, code that shares nothing with the
//     solver. A proof that fails the check is reported as Undecided with
//     the reason, never as an answer.
//   - Row numbers in results are 1-based data rows of the file (ingest's
//     convention), rows left out or not: pattern index i is row i+1.
//   - Inputs are never modified.
//   - The same data, options and seed give the same results, bit for bit,
//     on any machine; only a context deadline depends on the clock.
//   - Anything caused by the data is an error or an undecided result,
//     never a panic.
package separate
