// Package evaluate scores classifiers: confusion tables and the metrics
// read from them, stratified k-fold splits, cross-validation of a learner
// beside its baselines (RunStudy), the auto choice of a numeric encoding on
// training rows, and the scoring of labelled rows by a saved classifier.
//
// Cross-validation never leaks a held-out fold: the encoding plan, the auto
// encoding choice and the weights of each fold are fitted on its training
// rows only, and the held-out rows are scored through the one scoring path
// of package model. The headline accuracy is pooled over every held-out
// prediction; the fold mean and sd sit beside it.
//
// # Confusion tables
//
// A [Confusion] counts rows by true class (row index) and predicted class
// (column index): Matrix[i][j] is the number of rows of true class i that
// were predicted as class j. Classes are indexes into Labels.
//
// Conventions, which every metric follows:
//
//   - A ratio with a zero denominator is 0 (common practice). So the
//     precision of a class that is never predicted is 0, the recall of a
//     class with no rows is 0, and every metric of an empty table is 0.
//   - [Confusion.BalancedAccuracy] is the mean recall over the classes that
//     occur in the truth (support > 0).
//   - [Confusion.MacroF1] is the mean F1 over the classes that occur in the
//     truth or in the predictions (support > 0 or predicted > 0). A class
//     absent from both has no F1 and is left out; a class that occurs only
//     in one of the two counts with F1 0.
//   - [Confusion.Kappa] is Cohen's (1960) κ = (p_o − p_e)/(1 − p_e), where p_o
//     is the observed agreement (accuracy) and p_e the agreement expected
//     from the row and column totals. When p_e = 1 every row is of one class
//     and predicted as that class, so agreement is perfect and κ is 1; an
//     empty table has κ 0.
//   - [Confusion.Matthews] is the multi-class Matthews correlation (Gorodkin
//     2004); it is 0 when every row is of one class or predicted as one.
//     [Confusion.Macro] averages over the classes MacroF1 counts;
//     [Confusion.Micro] equals the accuracy; [Confusion.Weighted] weights
//     each class by its rows. [Confusion.AccuracyInterval] is Wilson's
//     (1927) 95% interval.
//
// # Scores
//
// [Scored] pairs rows' true classes with their per-class scores: the ROC
// curve and its area (Mann-Whitney form, ties counting one half), and for
// scores that are probabilities (logistic units) the log loss and Brier's
// score. Cross-validation keeps each fold's scored predictions when its
// method scores ([Method.Score], [CVResult.OutOfFold]).
//
// # Folds
//
// [StratifiedFolds] splits row indexes into k test folds; a class with
// fewer rows than k is in fewer folds ([SmallClasses] names it). The
// invariants:
//
//   - every row is in exactly one fold, and each fold is sorted ascending;
//   - for every class, the number of its rows in any two folds differs by
//     at most one;
//   - the sizes of any two folds differ by at most one;
//   - the result depends only on the inputs and the seed (math/rand/v2 PCG),
//     bit for bit.
//
// Inputs are never modified, and nothing in this package uses global
// randomness.
package evaluate
