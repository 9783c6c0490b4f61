package reference

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"
)

// The embedded copies must equal the files the package tests read.
func TestEmbeddedCopiesMatchTestdata(t *testing.T) {
	for name, embedded := range map[string][]byte{"iris.csv": irisCSV, "xor.csv": xorCSV, "and.csv": andCSV, "or.csv": orCSV} {
		want, err := os.ReadFile(filepath.Join("..", "..", "testdata", name))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(embedded, want) {
			t.Errorf("internal/reference/%s differs from testdata/%s; copy it again", name, name)
		}
	}
}

// Every reference case passes on this installation; each case names its
// source in the Source field.
func TestEveryCasePasses(t *testing.T) {
	cases, err := Run()
	if err != nil {
		t.Fatal(err)
	}
	if len(cases) < 10 {
		t.Fatalf("only %d cases ran", len(cases))
	}
	for _, c := range cases {
		if c.Source == "" {
			t.Errorf("%s: no source", c.Name)
		}
		if !c.Pass {
			t.Errorf("%s (%s): expected %s, got %s", c.Name, c.Source, c.Expected, c.Got)
		}
	}
}
