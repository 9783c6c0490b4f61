// Command deltafit-docs writes deltafit's man pages, docs/man/*.1, from
// the command tree that `deltafit __commands` prints, with cobra/doc (kept
// out of the deltafit binary) and a fixed date, so that the same commands
// give the same bytes.
//
//	go run ./cmd/deltafit-docs            # rewrite docs/man from the sources
//	go run ./cmd/deltafit-docs -check     # exit 1 if docs/man is not current
//
// It gets the tree by running `go run deltafit/cmd/deltafit __commands`,
// or reads it from -spec FILE (- for stdin).
package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/spf13/cobra"
	"github.com/spf13/cobra/doc"
	"github.com/spf13/pflag"

	"deltafit/internal/cmdspec"
)

// manDate is the date every page carries; the pages change only when the
// commands do.
var manDate = time.Date(2026, time.January, 1, 0, 0, 0, 0, time.UTC)

func main() {
	dir := flag.String("o", filepath.Join("docs", "man"), "directory of the man pages")
	check := flag.Bool("check", false, "write nothing; exit 1 if the pages in -o differ from what the commands give")
	specFile := flag.String("spec", "", "read the command tree from this JSON file (- for stdin) instead of running deltafit __commands")
	flag.Parse()
	if err := run(*dir, *check, *specFile); err != nil {
		fmt.Fprintln(os.Stderr, "deltafit-docs:", err)
		os.Exit(1)
	}
}

func run(dir string, check bool, specFile string) error {
	spec, err := readSpec(specFile)
	if err != nil {
		return err
	}
	pages, err := manPages(spec)
	if err != nil {
		return err
	}
	if check {
		stale := stalePages(dir, pages)
		if len(stale) > 0 {
			return fmt.Errorf("%s is not current (%s): run go run ./cmd/deltafit-docs", dir, strings.Join(stale, ", "))
		}
		return nil
	}
	if err := os.MkdirAll(dir, 0o777); err != nil {
		return err
	}
	for _, name := range stalePages(dir, pages) {
		path := filepath.Join(dir, name)
		if page, ok := pages[name]; ok {
			if err := os.WriteFile(path, page, 0o666); err != nil {
				return err
			}
		} else if err := os.Remove(path); err != nil {
			return err
		}
	}
	return nil
}

// readSpec reads the command tree from file, or from `deltafit
// __commands` when file is "".
func readSpec(file string) (*cmdspec.Command, error) {
	var b []byte
	var err error
	switch file {
	case "":
		cmd := exec.Command("go", "run", "deltafit/cmd/deltafit", "__commands")
		cmd.Stderr = os.Stderr
		if b, err = cmd.Output(); err != nil {
			return nil, fmt.Errorf("go run deltafit/cmd/deltafit __commands: %w", err)
		}
	case "-":
		b, err = io.ReadAll(os.Stdin)
	default:
		b, err = os.ReadFile(file)
	}
	if err != nil {
		return nil, err
	}
	var spec cmdspec.Command
	if err := json.Unmarshal(b, &spec); err != nil {
		return nil, fmt.Errorf("the command tree: %w", err)
	}
	return &spec, nil
}

// manPages renders a page per command of spec, by file name.
func manPages(spec *cmdspec.Command) (map[string][]byte, error) {
	root := build(spec)
	header := &doc.GenManHeader{Title: strings.ToUpper(spec.Name), Section: "1", Date: &manDate, Source: spec.Name, Manual: spec.Name + " manual"}
	pages := map[string][]byte{}
	var render func(c *cobra.Command, s *cmdspec.Command) error
	render = func(c *cobra.Command, s *cmdspec.Command) error {
		var buf bytes.Buffer
		h := *header // GenMan fills in the header; each page starts afresh
		if err := doc.GenMan(c, &h, &buf); err != nil {
			return err
		}
		page, err := withExitStatus(buf.Bytes(), s.ExitStatus)
		if err != nil {
			return fmt.Errorf("%s: %w", c.CommandPath(), err)
		}
		pages[strings.ReplaceAll(c.CommandPath(), " ", "-")+".1"] = page
		for i := range s.Commands {
			if err := render(c.Commands()[slices.IndexFunc(c.Commands(), func(sub *cobra.Command) bool { return sub.Name() == s.Commands[i].Name })], &s.Commands[i]); err != nil {
				return err
			}
		}
		return nil
	}
	return pages, render(root, spec)
}

// build makes a cobra command tree that shows what spec describes.
func build(spec *cmdspec.Command) *cobra.Command {
	c := &cobra.Command{Use: spec.Use, Short: spec.Short, Long: spec.Long, Example: spec.Example, DisableAutoGenTag: true}
	if spec.Runnable {
		c.Run = func(*cobra.Command, []string) {}
	}
	addFlags(c.Flags(), spec.Flags)
	addFlags(c.PersistentFlags(), spec.Persistent)
	for i := range spec.Commands {
		c.AddCommand(build(&spec.Commands[i]))
	}
	return c
}

func addFlags(fs *pflag.FlagSet, flags []cmdspec.Flag) {
	for _, f := range flags {
		fl := fs.VarPF(&shownValue{typ: f.Type, value: f.Default}, f.Name, f.Shorthand, f.Usage)
		fl.DefValue, fl.NoOptDefVal = f.Default, f.NoOptDefVal
	}
}

// shownValue is a flag value that only shows its type and default.
type shownValue struct{ typ, value string }

func (v *shownValue) String() string     { return v.value }
func (v *shownValue) Set(s string) error { v.value = s; return nil }
func (v *shownValue) Type() string       { return v.typ }

// withExitStatus adds an EXIT STATUS section before SEE ALSO, as man pages
// place it.
func withExitStatus(page []byte, status string) ([]byte, error) {
	if status == "" {
		return nil, errors.New("the command has no exit status")
	}
	var section bytes.Buffer
	section.WriteString(".SH EXIT STATUS\n.PP\n")
	for _, line := range strings.Split(status, "\n") {
		line = strings.ReplaceAll(line, `\`, `\e`)
		if strings.HasPrefix(line, ".") || strings.HasPrefix(line, "'") {
			line = `\&` + line
		}
		section.WriteString(line + "\n")
	}
	section.WriteString("\n")
	at := bytes.Index(page, []byte(".SH SEE ALSO"))
	if at < 0 {
		at = len(page)
	}
	return slices.Concat(page[:at], section.Bytes(), page[at:]), nil
}

// stalePages lists the files of dir that differ from pages, are missing
// or are pages of no command.
func stalePages(dir string, pages map[string][]byte) []string {
	var stale []string
	for name, page := range pages {
		if old, err := os.ReadFile(filepath.Join(dir, name)); err != nil || !bytes.Equal(old, page) {
			stale = append(stale, name)
		}
	}
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if _, ok := pages[e.Name()]; !ok && strings.HasSuffix(e.Name(), ".1") {
			stale = append(stale, e.Name())
		}
	}
	slices.Sort(stale)
	return stale
}
