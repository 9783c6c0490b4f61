// Package refdata embeds the reference data of testdata/ — the Iris data
// and the two-input truth tables — so that the binary carries them for
// selfcheck and tests of every package read them the same way. The files
// are byte-for-byte copies of testdata/ (a test checks it); see
// testdata/PROVENANCE.md for where they come from.
package refdata
