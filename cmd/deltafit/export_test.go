package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// export's exit codes: 0 ok, 1 for a model it cannot read, 2 for a bad
// command line, with one line on stderr.
func TestExportExitCodes(t *testing.T) {
	dir := t.TempDir()
	model := filepath.Join(dir, "model.json")
	iris := filepath.Join("..", "..", "testdata", "iris.csv")
	var stdout, stderr bytes.Buffer
	if code := run(context.Background(), []string{"fit", iris, "--target", "species", "-o", model}, nil, &stdout, &stderr); code != 0 {
		t.Fatalf("fit: exit %d: %s", code, stderr.String())
	}
	out := filepath.Join(dir, "model.onnx")
	for _, tc := range []struct {
		name string
		args []string
		code int
		err  string // substring of the one stderr line
	}{
		{"ok", []string{"--model", model, "--to", "onnx", "-o", out}, 0, ""},
		{"ok columns", []string{"--model", model, "--to", "onnx", "--inputs", "columns", "-o", out}, 0, ""},
		{"unknown format", []string{"--model", model, "--to", "pmml", "-o", out}, 2, `--to "pmml": give onnx`},
		{"no format", []string{"--model", model, "-o", out}, 2, "--to is required"},
		{"no output", []string{"--model", model, "--to", "onnx"}, 2, "-o is required"},
		{"no model", []string{"--to", "onnx", "-o", out}, 2, "--model is required"},
		{"unknown inputs", []string{"--model", model, "--to", "onnx", "--inputs", "raw", "-o", out}, 2, `--inputs "raw"`},
		{"output is the model", []string{"--model", model, "--to", "onnx", "-o", model}, 2, "is also an input"},
		{"argument", []string{"extra", "--model", model, "--to", "onnx", "-o", out}, 2, `unknown command "extra"`},
		{"no such model", []string{"--model", filepath.Join(dir, "none.json"), "--to", "onnx", "-o", out}, 1, "cannot open the model"},
		{"not a model", []string{"--model", iris, "--to", "onnx", "-o", out}, 1, "not a usable deltafit model"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			os.Remove(out)
			var stdout, stderr bytes.Buffer
			code := run(context.Background(), append([]string{"export"}, tc.args...), strings.NewReader(""), &stdout, &stderr)
			if code != tc.code {
				t.Fatalf("exit code %d, want %d; stderr: %s", code, tc.code, stderr.String())
			}
			_, statErr := os.Stat(out)
			if tc.err == "" {
				if stderr.Len() != 0 || statErr != nil {
					t.Fatalf("stderr %q, output file: %v", stderr.String(), statErr)
				}
				return
			}
			lines := strings.Split(strings.TrimRight(stderr.String(), "\n"), "\n")
			if len(lines) != 1 || !strings.HasPrefix(lines[0], "deltafit: ") || !strings.Contains(lines[0], tc.err) {
				t.Fatalf("stderr %q, want one line containing %q", stderr.String(), tc.err)
			}
			if statErr == nil {
				t.Error("a failed export left an output file")
			}
		})
	}
}
