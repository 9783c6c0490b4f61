// Package refdata embeds the reference data of testdata/ — the Iris data
// and the two-input truth tables — so that the binary carries them for
// selfcheck and tests of every package read them the same way. The files
// are byte-for-byte copies of testdata/ (a test checks it); see
// testdata/PROVENANCE.md for where they come from.
package refdata

import (
	"bytes"
	_ "embed"

	"deltafit/ingest"
)

var (
	//go:embed iris.csv
	IrisCSV []byte
	//go:embed xor.csv
	XorCSV []byte
	//go:embed and.csv
	AndCSV []byte
	//go:embed or.csv
	OrCSV []byte
)

// Files maps each embedded file's name to its bytes.
var Files = map[string][]byte{"iris.csv": IrisCSV, "xor.csv": XorCSV, "and.csv": AndCSV, "or.csv": OrCSV}

// Dataset reads an embedded file with default options and picks target.
func Dataset(name, target string) (*ingest.Dataset, error) {
	t, err := ingest.ReadTable(name, bytes.NewReader(Files[name]), ingest.ReadOptions{})
	if err != nil {
		return nil, err
	}
	return ingest.NewDataset(t, target, nil)
}

// Iris is the Iris data with species as the target.
func Iris() (*ingest.Dataset, error) { return Dataset("iris.csv", "species") }
