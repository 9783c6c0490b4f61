package main

import (
	"bytes"
	"context"
	"io"
	"path/filepath"
	"strings"
	"testing"
)

// complete runs the shell's completion request for args and returns the
// candidates and the directive line.
func complete(t *testing.T, args ...string) ([]string, string) {
	t.Helper()
	var out bytes.Buffer
	if code := run(context.Background(), append([]string{"__complete"}, args...), nil, &out, io.Discard); code != 0 {
		t.Fatalf("__complete %v: exit %d", args, code)
	}
	lines := strings.Split(strings.TrimSpace(out.String()), "\n")
	return lines[:len(lines)-1], lines[len(lines)-1]
}

// Column flags complete with the names in DATA's header; lists complete
// their last name; flag values complete per command.
func TestCompletion(t *testing.T) {
	iris := filepath.Join("..", "..", "testdata", "iris.csv")
	semicolons := filepath.Join("..", "..", "testdata", "bad", "semicolon_delimited.csv")
	for _, tc := range []struct {
		args []string
		want string // the candidates, joined by spaces
	}{
		{[]string{"fit", iris, "--target", ""}, "sepal_length sepal_width petal_length petal_width species"},
		{[]string{"fit", iris, "--target", "sp"}, "species"},
		{[]string{"check", iris, "--ignore", "sepal_length,pe"}, "sepal_length,petal_length sepal_length,petal_width"},
		{[]string{"predict", "--model", "m.json", iris, "--keep", "s"}, "sepal_length sepal_width species"},
		{[]string{"fit", iris, "--kind", "sepal_w"}, "sepal_width="},
		{[]string{"fit", iris, "--kind", "species=c"}, "species=categorical"},
		{[]string{"fit", "-", "--target", ""}, ""},
		{[]string{"fit", "nosuch.csv", "--target", ""}, ""},
		{[]string{"predict", "--format", ""}, "csv jsonl arrow parquet"},
		{[]string{"evaluate", "--format", ""}, "text json markdown"},
		{[]string{"fit", iris, "--rule", ""}, "delta hebbian"},
		{[]string{"predict", "--scores", ""}, "raw normalized"},
		{[]string{"completion", ""}, "bash zsh fish"},
	} {
		got, _ := complete(t, tc.args...)
		if strings.Join(got, " ") != tc.want {
			t.Errorf("%v: %q, want %q", tc.args, got, tc.want)
		}
	}
	if got, _ := complete(t, "fit", semicolons, "--delimiter", ";", "--target", ""); len(got) < 2 {
		t.Errorf("--delimiter ; is not used to read the header: %q", got)
	}
	_, directive := complete(t, "fit", iris, "--ignore", "")
	if !strings.Contains(directive, ":6") { // NoSpace (2) | NoFileComp (4): the list may go on
		t.Errorf("--ignore directive %s", directive)
	}
}

// The completion scripts are made for each shell.
func TestCompletionScripts(t *testing.T) {
	for shell, want := range map[string]string{"bash": "complete -o default -F __start_deltafit deltafit", "zsh": "#compdef deltafit", "fish": "complete -c deltafit"} {
		var out bytes.Buffer
		if code := run(context.Background(), []string{"completion", shell}, nil, &out, io.Discard); code != 0 || !strings.Contains(out.String(), want) {
			t.Errorf("completion %s: exit %d, script without %q", shell, code, want)
		}
	}
	if code := run(context.Background(), []string{"completion", "powershell"}, nil, io.Discard, io.Discard); code != exitUsage {
		t.Errorf("completion powershell: exit %d, want %d", code, exitUsage)
	}
}
