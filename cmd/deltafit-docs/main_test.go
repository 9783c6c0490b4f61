package main

import (
	"bytes"
	"os/exec"
	"path/filepath"
	"testing"

	"deltafit/internal/fixture"
)

// The committed man pages are what the commands give now: run
// go run ./cmd/deltafit-docs after changing a command's help or flags.
func TestManPagesCurrent(t *testing.T) {
	if _, err := exec.LookPath("go"); err != nil {
		t.Skip("the go command is not available here")
	}
	fixture.ReadModuleFiles(t, filepath.Join("..", ".."))
	spec, err := readSpec("")
	if err != nil {
		t.Fatal(err)
	}
	pages, err := manPages(spec)
	if err != nil {
		t.Fatal(err)
	}
	if stale := stalePages(filepath.Join("..", "..", "docs", "man"), pages); len(stale) > 0 {
		t.Fatalf("docs/man is not current: %v; run go run ./cmd/deltafit-docs", stale)
	}
	for _, name := range []string{"deltafit.1", "deltafit-predict.1", "deltafit-encode.1", "deltafit-completion.1"} {
		page := pages[name]
		if !bytes.Contains(page, []byte(`.TH "DELTAFIT" "1" "Jan 2026" "deltafit" "deltafit manual"`)) {
			t.Errorf("%s: no header with the fixed date", name)
		}
		status := bytes.Index(page, []byte(".SH EXIT STATUS\n.PP\nExit status: 0 ok, 1 data or runtime error, 2 usage error"))
		if status < 0 || status < bytes.Index(page, []byte(".SH OPTIONS")) {
			t.Errorf("%s: the exit status is missing or not after the options", name)
		}
	}
	if !bytes.Contains(pages["deltafit-check.1"], []byte("With --require separable: 3")) {
		t.Error("check's page leaves out its gate's exit status")
	}
	if _, hidden := pages["deltafit-__commands.1"]; hidden {
		t.Error("the hidden command has a page")
	}
	again, err := manPages(spec)
	if err != nil {
		t.Fatal(err)
	}
	for name, page := range pages {
		if !bytes.Equal(page, again[name]) {
			t.Errorf("%s differs from one run to the next", name)
		}
	}
	if len(pages) < 11 {
		t.Errorf("%d pages, want one per command", len(pages))
	}
}
