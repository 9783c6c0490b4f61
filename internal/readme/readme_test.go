package readme_test

import (
	"bytes"
	"errors"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"deltafit/internal/fixture"
)

// shBlocks returns the fenced ```sh blocks of a Markdown text, in order.
func shBlocks(markdown string) []string {
	re := regexp.MustCompile("(?ms)^```sh\n(.*?)^```$")
	var blocks []string
	for _, m := range re.FindAllStringSubmatch(markdown, -1) {
		blocks = append(blocks, m[1])
	}
	return blocks
}

// The README's examples run as written from a clone. The first block, the
// set-up, builds the binary at the root of the repository (where
// .gitignore expects it) and is run there; the others run in order, in a
// scratch directory that holds the repository's testdata, with that
// binary on PATH. Each runs under bash -e -o pipefail: a failing command
// anywhere, in a pipe too, fails the test.
func TestREADMEExamples(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary")
	}
	if _, err := exec.LookPath("go"); err != nil {
		t.Skip("the go command is not available here")
	}
	root, err := filepath.Abs(filepath.Join("..", ".."))
	if err != nil {
		t.Fatal(err)
	}
	fixture.ReadModuleFiles(t, root)
	text, err := os.ReadFile(filepath.Join(root, "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	blocks := shBlocks(string(text))
	if len(blocks) < 2 || !strings.Contains(blocks[0], "go build -o deltafit ./cmd/deltafit") {
		t.Fatalf("the README has %d sh blocks; the first should build the binary", len(blocks))
	}
	for _, tool := range []string{"bash", "jq", "awk", "sed"} {
		if _, err := exec.LookPath(tool); err != nil {
			t.Fatalf("the README's examples use %s, which is not installed", tool)
		}
	}
	binary := filepath.Join(root, "deltafit")
	if _, err := os.Stat(binary); errors.Is(err, fs.ErrNotExist) {
		defer os.Remove(binary) // leave the tree as it was
	}
	work := t.TempDir()
	if err := os.Symlink(filepath.Join(root, "testdata"), filepath.Join(work, "testdata")); err != nil {
		t.Fatal(err)
	}
	env := append(os.Environ(), "PATH="+root+string(os.PathListSeparator)+os.Getenv("PATH"))
	for i, block := range blocks {
		dir := work
		if i == 0 {
			dir = root
		}
		cmd := exec.Command("bash", "-e", "-o", "pipefail", "-c", block)
		cmd.Dir, cmd.Env = dir, env
		var stdout, stderr bytes.Buffer
		cmd.Stdout, cmd.Stderr = &stdout, &stderr
		if err := cmd.Run(); err != nil {
			t.Fatalf("README sh block %d failed (%v):\n%s\nstdout:\n%s\nstderr:\n%s", i+1, err, block, stdout.String(), stderr.String())
		}
		if strings.Contains(stderr.String(), "deltafit: ") && !strings.Contains(stderr.String(), "--require separable") {
			t.Errorf("README sh block %d printed errors or warnings:\n%s", i+1, stderr.String())
		}
	}
	// What the examples made: the predictions of the model written to a
	// file and of the one piped are the same; the Arrow stream is one.
	read := func(name string) []byte {
		b, err := os.ReadFile(filepath.Join(work, name))
		if err != nil {
			t.Fatal(err)
		}
		return b
	}
	predictions := read("predictions.csv")
	if n := bytes.Count(predictions, []byte("\n")); n != 151 {
		t.Errorf("predictions.csv has %d lines, want a header and 150 rows", n)
	}
	if !bytes.Equal(read("piped.csv"), predictions) {
		t.Error("fit -o - | predict --model - predicts other bytes than the model file does")
	}
	if arrows := read("scored.arrows"); !bytes.HasPrefix(arrows, []byte{0xff, 0xff, 0xff, 0xff}) {
		t.Error("scored.arrows is not an Arrow IPC stream")
	}
	if report := read("report.md"); !bytes.Contains(report, []byte("accuracy")) {
		t.Error("report.md holds no evaluation")
	}
}
