package refdata

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"
)

// The embedded copies must equal the files in testdata/.
func TestEmbeddedCopiesMatchTestdata(t *testing.T) {
	for name, embedded := range Files {
		want, err := os.ReadFile(filepath.Join("..", "..", "testdata", name))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(embedded, want) {
			t.Errorf("internal/refdata/%s differs from testdata/%s; copy it again", name, name)
		}
	}
}

func TestIris(t *testing.T) {
	d, err := Iris()
	if err != nil {
		t.Fatal(err)
	}
	// UCI iris.names: 150 instances, 3 classes.
	if d.Table.Rows != 150 || len(d.Labels) != 3 {
		t.Fatalf("%d rows, %d classes; want 150 and 3", d.Table.Rows, len(d.Labels))
	}
}
