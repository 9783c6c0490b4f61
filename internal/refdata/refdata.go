package refdata

import (
	"bytes"
	_ "embed"
	"fmt"

	"deltafit/ingest"
	"deltafit/ingest/tabular"
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
func Dataset(name, target string) (*tabular.Dataset, error) {
	data, ok := Files[name]
	if !ok {
		return nil, fmt.Errorf("refdata: no embedded file %q", name)
	}
	t, err := ingest.ReadTable(name, bytes.NewReader(data), ingest.ReadOptions{})
	if err != nil {
		return nil, err
	}
	return tabular.NewDataset(t, target, nil)
}

// Iris is the Iris data with species as the target.
func Iris() (*tabular.Dataset, error) { return Dataset("iris.csv", "species") }
