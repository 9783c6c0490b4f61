package refdata

import (
	"bytes"
	_ "embed"
	"fmt"

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
	data, ok := Files[name]
	if !ok {
		return nil, fmt.Errorf("refdata: no embedded file %q", name)
	}
	t, err := ingest.ReadTable(name, bytes.NewReader(data), ingest.ReadOptions{})
	if err != nil {
		return nil, err
	}
	return ingest.NewDataset(t, target, nil)
}

// Iris is the Iris data with species as the target.
func Iris() (*ingest.Dataset, error) { return Dataset("iris.csv", "species") }
