package demo

import (
	"bytes"
	"flag"
	"os"
	"testing"
)

var update = flag.Bool("update", false, "rewrite kiln.csv from the generator")

// The embedded file must be exactly what the seeded generator writes, so
// anyone can regenerate it (go test ./internal/demo -update).
func TestEmbeddedMatchesGenerator(t *testing.T) {
	got := Generate(Seed, Rows)
	if *update {
		if err := os.WriteFile("kiln.csv", got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	if !bytes.Equal(got, CSV) {
		t.Fatalf("kiln.csv differs from Generate(%d, %d); run go test ./internal/demo -update", Seed, Rows)
	}
}
