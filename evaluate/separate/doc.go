// Package separate decides whether a single layer can classify a dataset
// without error, and proves the answer.
//
// For two sets of rows, the positive and the negative side of a split, a
// hyperplane w·x + b puts every positive row strictly above it and every
// negative row strictly below it exactly when the convex hulls of the two
// sides do not meet (Farkas' lemma, the theorem of the alternative).
// Separate solves one linear program (gonum's optimize/convex/lp) that
// finds the convex weights bringing the two sides' weighted means closest
// in the L1 norm. When they meet, the weights are a Certificate: a few
// rows from each side, at most D+2 of them at a basic solution
// (Carathéodory), whose weighted means coincide. When they do not, the
// program's dual gives a Witness hyperplane.
//
// The program has D+2 rows whatever the number of data rows. For large
// splits it is solved on a growing working set: a certificate found on a
// subset holds for the whole split, and a hyperplane found on a subset is
// tried on every row, the rows it misplaces joining the set until none is.
// Its time grows about as D⁴, so above MaxInputs inputs it is not solved:
// the verdict is TooManyInputs, unless a pattern found on both sides
// proves the split not separable at once.
//
// Check works on a whole tabular.Dataset: each class against the rest (and,
// with Pairs, each pair of classes), in the encoded input space or in the
// standardized raw numeric columns; it also finds conflicting rows (one
// pattern, several classes) with the error floor they impose on any
// classifier, and profiles the columns, counting duplicate rows (same
// features, same class). The raw space names the feature columns it leaves
// out (not numeric, or not varying) and why.
//
// Invariants that always hold:
//   - Every reported proof has been checked against the data by
//     VerifyCertificate or VerifyWitness, code that shares nothing with the
//     solver. A proof that fails the check is reported as Undecided with
//     the reason, never as an answer.
//   - Row numbers in results are 1-based data rows (ingest's convention):
//     pattern index i is row i+1.
//   - Inputs are never modified.
//   - The same data, options and seed give the same results, bit for bit.
//   - Anything caused by the data is an error or an Undecided result,
//     never a panic.
package separate
