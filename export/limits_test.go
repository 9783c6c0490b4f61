package export_test

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"deltafit/export"
)

// TestReadModelBounded checks that hostile model files are refused before
// memory is spent on them.
func TestReadModelBounded(t *testing.T) {
	dir := t.TempDir()
	sparse := filepath.Join(dir, "huge.json")
	f, err := os.Create(sparse)
	if err != nil {
		t.Fatal(err)
	}
	// A sparse file one byte over the cap: no disk, and it must not be read.
	if err := f.Truncate(export.MaxModelBytes + 1); err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	absurd, err := os.Open(filepath.Join("..", "testdata", "bad", "model_absurd_inputs.json"))
	if err != nil {
		t.Fatal(err)
	}
	defer absurd.Close()
	for _, tc := range []struct {
		name     string
		r        io.Reader
		maxAlloc uint64 // bytes the read may allocate
		want     string
	}{
		{"regular file over the cap", f, 1 << 20, "larger than the cap"},
		{"declared inputs 1e12", absurd, 1 << 20, "1000000000000 inputs"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var before, after runtime.MemStats
			runtime.ReadMemStats(&before)
			_, err := export.ReadModel(tc.name, tc.r)
			runtime.ReadMemStats(&after)
			if !errors.Is(err, export.ErrModel) || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %v, want ErrModel with %q", err, tc.want)
			}
			if grown := after.TotalAlloc - before.TotalAlloc; grown > tc.maxAlloc {
				t.Errorf("reading allocated %d KiB, more than %d KiB", grown>>10, tc.maxAlloc>>10)
			}
		})
	}
}
