// Package reference runs the built-in reference cases behind
// `deltafit selfcheck`: results the literature states for the Iris data and
// the two-input truth tables, recomputed by this installation.
//
// The data comes embedded from internal/refdata.
//
// Every Case names its Source beside its Expected value: a publication, the
// dataset's documentation, "common practice" or "worked by hand".
package reference
