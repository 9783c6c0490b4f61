package export

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// CheckWritable passes what WriteFile can write and refuses, naming the
// path as given, what it cannot; it leaves nothing behind.
func TestCheckWritable(t *testing.T) {
	dir := t.TempDir()
	readOnly := filepath.Join(dir, "ro")
	if err := os.Mkdir(readOnly, 0o500); err != nil {
		t.Fatal(err)
	}
	for _, ok := range []string{filepath.Join(dir, "new.csv"), "/dev/null"} {
		if err := CheckWritable(ok); err != nil {
			t.Errorf("%s: %v", ok, err)
		}
	}
	cases := map[string]string{
		filepath.Join(dir, "nodir", "m.json"): "the directory " + filepath.Join(dir, "nodir") + " does not exist",
		dir:                                   "it is a directory",
	}
	if os.Geteuid() != 0 { // root writes anywhere
		cases[filepath.Join(readOnly, "m.json")] = "permission denied"
	}
	for path, want := range cases {
		err := CheckWritable(path)
		if err == nil || !strings.HasPrefix(err.Error(), "export: cannot write "+path+": ") || !strings.Contains(err.Error(), want) {
			t.Errorf("%s: error %v, want it to name the path and say %q", path, err, want)
		}
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(entries) != 1 {
		t.Fatalf("the checks left files behind: %v", entries)
	}
}
