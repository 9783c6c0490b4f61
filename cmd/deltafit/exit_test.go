package main

import (
	"bytes"
	"context"
	"path/filepath"
	"strings"
	"testing"
)

// The exit codes are a contract: 0 ok, 1 data or runtime error, 2 usage.
func TestExitCodes(t *testing.T) {
	iris := filepath.Join("..", "..", "testdata", "iris.csv")
	xor := filepath.Join("..", "..", "testdata", "xor.csv")
	and := filepath.Join("..", "..", "testdata", "and.csv")
	for _, tc := range []struct {
		name string
		args []string
		code int
		err  string // substring of the one stderr line after any warnings
	}{
		{"ok", []string{"fit", iris, "--target", "species"}, 0, ""},
		{"no args", []string{"fit"}, 2, "fit takes one DATA argument"},
		{"unknown flag", []string{"fit", iris, "--target", "species", "--nope"}, 2, "unknown flag"},
		{"missing target flag", []string{"fit", iris}, 2, "--target is required"},
		{"bad rule", []string{"fit", iris, "--target", "species", "--rule", "magic"}, 2, "--rule"},
		{"bad encoding", []string{"fit", iris, "--target", "species", "--numeric", "thermometer:1"}, 2, "--numeric"},
		{"one fold", []string{"fit", iris, "--target", "species", "--folds", "1"}, 2, "--folds 1"},
		{"unknown target", []string{"fit", iris, "--target", "colour"}, 1, `column colour: there is no target column of that name`},
		{"no such file", []string{"fit", "nope.csv", "--target", "y"}, 1, "cannot open the data"},
		{"more folds than rows", []string{"fit", xor, "--target", "y", "--folds", "5"}, 1, `5 folds for 4 rows`},
		{"a class smaller than the folds is a warning", []string{"fit", and, "--target", "y", "--folds", "2"}, 0, `warning: ../../testdata/and.csv: class "1" has 1 row, fewer than the 2 folds`},
		// Widrow & Stearns 1985: LMS diverges for rates above 2/λmax.
		{"divergence", []string{"fit", iris, "--target", "species", "--unit", "linear", "--rate", "50"}, 1, "try --rate auto"},
		{"missing model", []string{"predict", "--model", "none.json", iris}, 1, "cannot open the model"},
		{"stream folds", []string{"fit", iris, "--target", "species", "--stream", "--folds", "3"}, 2, "--folds is not offered with --stream yet"},
		{"stream holdout", []string{"fit", iris, "--target", "species", "--stream", "--holdout", "0.2"}, 2, "--holdout is not offered with --stream yet"},
		{"stream auto", []string{"fit", iris, "--target", "species", "--stream", "--numeric", "auto"}, 2, "--numeric auto is not offered with --stream yet"},
		{"stream stdin", []string{"fit", "-", "--target", "species", "--stream"}, 2, "reads DATA twice"},
		{"over the budget with folds", []string{"fit", iris, "--target", "species", "--memory", "1KB", "--folds", "3"}, 2, "--folds is not offered with a fit on data larger than the memory budget"},
		{"bad memory", []string{"fit", iris, "--target", "species", "--memory", "lots"}, 2, "--memory"},
		{"negative block", []string{"fit", iris, "--target", "species", "--block", "-1"}, 2, "--block -1"},
		{"cache without stream", []string{"fit", iris, "--target", "species", "--cache", "store.dfp"}, 2, "--cache keeps the pattern store"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			code := run(context.Background(), tc.args, strings.NewReader(""), &stdout, &stderr)
			if code != tc.code {
				t.Fatalf("exit code %d, want %d; stderr: %s", code, tc.code, stderr.String())
			}
			if tc.err == "" {
				if stderr.Len() != 0 {
					t.Fatalf("unexpected stderr: %s", stderr.String())
				}
				return
			}
			lines := strings.Split(strings.TrimRight(stderr.String(), "\n"), "\n")
			last := lines[len(lines)-1]
			for _, w := range lines[:len(lines)-1] {
				if !strings.HasPrefix(w, "deltafit: warning: ") {
					t.Fatalf("stderr %q: %q before the last line is not a warning", stderr.String(), w)
				}
			}
			if !strings.HasPrefix(last, "deltafit: ") || !strings.Contains(last, tc.err) {
				t.Fatalf("stderr %q, want a last line containing %q", stderr.String(), tc.err)
			}
		})
	}
}
