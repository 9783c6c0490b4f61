package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files of testdata/bad")

// A bad-input case is testdata/bad/NAME.golden, usually beside a data or
// model file NAME.EXT. The golden file holds
//
//	# what the case is about
//	args: the command line, with $FILE, $DATA, $MODEL (optional)
//	model: the fit command line that makes $MODEL (optional)
//	exit: the exit code
//	warning: a warning printed before the stderr line (optional, repeatable)
//	stderr: the one line the command prints on stderr (empty for none)
//
// Without args, a model file (.json) is given to predict with good.csv
// and any other file to fit --target species. $MODEL defaults to a model
// fitted on good.csv. fit and predict get -o $OUT, a file that exists
// before the run: a failed run must leave it as it was.
type badCase struct {
	name     string
	golden   string // path of the golden file
	file     string // the case's input, "" for none
	header   []string
	args     string
	model    string
	exit     int
	warnings []string
	stderr   string
}

// generatedCases are inputs too large to commit, written into a temporary
// directory by the test.
var generatedCases = map[string]func() []byte{
	// MaxCellBytes: one 10 MB field.
	"gen_field_10mb": func() []byte {
		return []byte("x,species\n" + strings.Repeat("a", 10<<20) + ",setosa\nb,versicolor\n")
	},
	// MaxCategories: 100,000 distinct values in one column.
	"gen_100k_categories": func() []byte {
		var b strings.Builder
		b.WriteString("id,species\n")
		for i := range 100_000 {
			fmt.Fprintf(&b, "c%d,%s\n", i, []string{"setosa", "versicolor"}[i%2])
		}
		return []byte(b.String())
	},
	// MaxHeaderBytes: a header line of 2 MiB.
	"gen_header_2mib": func() []byte {
		return []byte(strings.Repeat("x", 2<<20) + ",species\n1,setosa\n")
	},
	// An open quote in the first row swallows the rest of a 3 MB file.
	"gen_open_quote_3mb": func() []byte {
		return []byte("x,species\n\"1,setosa\n" + strings.Repeat("2,versicolor\n", 3<<20/13))
	},
}

func badDir(t *testing.T) string {
	t.Helper()
	dir, err := filepath.Abs(filepath.Join("..", "..", "testdata", "bad"))
	if err != nil {
		t.Fatal(err)
	}
	return dir
}

// loadBadCases reads every golden file of dir and, with -update, makes one
// for each input that has none.
func loadBadCases(t *testing.T, dir string) []*badCase {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	cases := map[string]*badCase{}
	for _, e := range entries {
		name, ext := strings.TrimSuffix(e.Name(), filepath.Ext(e.Name())), filepath.Ext(e.Name())
		if name == "good" {
			continue
		}
		c := cases[name]
		if c == nil {
			c = &badCase{name: name, golden: filepath.Join(dir, name+".golden")}
			cases[name] = c
		}
		if ext != ".golden" {
			c.file = filepath.Join(dir, e.Name())
		}
	}
	for name := range generatedCases {
		if cases[name] == nil {
			cases[name] = &badCase{name: name, golden: filepath.Join(dir, name+".golden")}
		}
	}
	var list []*badCase
	for _, c := range cases {
		b, err := os.ReadFile(c.golden)
		switch {
		case os.IsNotExist(err) && *update:
		case err != nil:
			t.Fatalf("%s: no golden file (run go test -update to make one): %v", c.name, err)
		}
		for _, line := range strings.Split(strings.TrimRight(string(b), "\n"), "\n") {
			key, value, _ := strings.Cut(line, ": ")
			switch {
			case strings.HasPrefix(line, "#"):
				c.header = append(c.header, line)
			case key == "args":
				c.args = value
			case key == "model":
				c.model = value
			case key == "exit":
				c.exit, err = strconv.Atoi(value)
				if err != nil {
					t.Fatalf("%s: exit: %v", c.golden, err)
				}
			case key == "warning":
				c.warnings = append(c.warnings, value)
			case key == "stderr" || line == "stderr:":
				c.stderr = value
			case line != "":
				t.Fatalf("%s: unknown line %q", c.golden, line)
			}
		}
		if c.args == "" {
			c.args = "fit $FILE --target species"
			if strings.HasSuffix(c.file, ".json") {
				c.args = "predict --model $FILE $DATA/bad/good.csv"
			}
		}
		list = append(list, c)
	}
	slices.SortFunc(list, func(a, b *badCase) int { return strings.Compare(a.name, b.name) })
	return list
}

func (c *badCase) write() error {
	var b strings.Builder
	for _, h := range c.header {
		b.WriteString(h + "\n")
	}
	fmt.Fprintf(&b, "args: %s\n", c.args)
	if c.model != "" {
		fmt.Fprintf(&b, "model: %s\n", c.model)
	}
	fmt.Fprintf(&b, "exit: %d\n", c.exit)
	for _, w := range c.warnings {
		fmt.Fprintf(&b, "warning: %s\n", w)
	}
	fmt.Fprintf(&b, "stderr: %s\n", c.stderr)
	return os.WriteFile(c.golden, []byte(strings.TrimRight(b.String(), " \n")+"\n"), 0o644)
}

// runCLI runs one command line in this process, turning a panic into a
// test failure that names the command.
func runCLI(t *testing.T, args []string) (code int, stdout, stderr string) {
	t.Helper()
	var out, errOut bytes.Buffer
	func() {
		defer func() {
			if p := recover(); p != nil {
				t.Errorf("deltafit %s panicked: %v", strings.Join(args, " "), p)
				code = -1
			}
		}()
		code = run(context.Background(), args, strings.NewReader(""), &out, &errOut)
	}()
	return code, out.String(), errOut.String()
}

// checkCalm fails if output shows a panic or a Go stack trace.
func checkCalm(t *testing.T, what, output string) {
	t.Helper()
	for _, sign := range []string{"panic", "goroutine ", "runtime error", ".go:"} {
		if strings.Contains(output, sign) {
			t.Errorf("%s: output holds %q:\n%s", what, sign, output)
		}
	}
}

// models fits, once per command line, the models the cases name.
type models struct {
	t    *testing.T
	dir  string
	data string
	made map[string]string
}

func (m *models) get(fitArgs string) string {
	if path, ok := m.made[fitArgs]; ok {
		return path
	}
	path := filepath.Join(m.dir, fmt.Sprintf("model%d.json", len(m.made)+1))
	args := append(strings.Fields(strings.ReplaceAll(fitArgs, "$DATA", m.data)), "-o", path)
	if code, _, stderr := runCLI(m.t, args); code != 0 {
		m.t.Fatalf("fitting the case model %q: exit %d: %s", fitArgs, code, stderr)
	}
	m.made[fitArgs] = path
	return path
}

const defaultModel = "fit $DATA/bad/good.csv --target species --seed 1"

// TestBadInputs runs every case of testdata/bad through the real command
// line and compares the exit code and the stderr line with the golden file.
func TestBadInputs(t *testing.T) {
	dir := badDir(t)
	data := filepath.Dir(dir)
	gen := t.TempDir()
	ms := &models{t: t, dir: t.TempDir(), data: data, made: map[string]string{}}
	for _, c := range loadBadCases(t, dir) {
		t.Run(c.name, func(t *testing.T) {
			file := c.file
			if g, ok := generatedCases[c.name]; ok {
				file = filepath.Join(gen, c.name+".csv")
				if err := os.WriteFile(file, g(), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			model := ms.get(orDefault(c.model, defaultModel))
			outDir := t.TempDir()
			out := filepath.Join(outDir, "out")
			previous := []byte("a previous output that a failed run must not touch\n")
			if err := os.WriteFile(out, previous, 0o644); err != nil {
				t.Fatal(err)
			}
			expand := strings.NewReplacer("$FILE", file, "$DATA", data, "$MODEL", model, "$OUT", out)
			args := strings.Fields(expand.Replace(c.args))
			if len(args) > 0 && (args[0] == "fit" || args[0] == "predict") && !slices.Contains(args, "-o") {
				args = append(args, "-o", out)
			}
			code, stdout, stderr := runCLI(t, args)
			checkCalm(t, "stdout", stdout)
			checkCalm(t, "stderr", stderr)
			// Paths back to placeholders; a generated file, which lives
			// outside $DATA, shows as $FILE.
			paths := []string{out, "$OUT", model, "$MODEL", data, "$DATA"}
			if c.file == "" && file != "" {
				paths = append([]string{file, "$FILE"}, paths...)
			}
			// Warnings before the last line, such as a rate above a
			// stability bound before training diverges, are checked apart.
			lines := strings.Split(strings.NewReplacer(paths...).Replace(strings.TrimSuffix(stderr, "\n")), "\n")
			line, warnings := lines[len(lines)-1], lines[:len(lines)-1]
			if *update {
				c.exit, c.warnings, c.stderr = code, warnings, line
				if err := c.write(); err != nil {
					t.Fatal(err)
				}
			}
			if code != c.exit {
				t.Errorf("exit code %d, want %d; stderr: %s", code, c.exit, stderr)
			}
			if line != c.stderr || !slices.Equal(warnings, c.warnings) {
				t.Errorf("stderr\n  got  %q then %s\n  want %q then %s", warnings, line, c.warnings, c.stderr)
			}
			for _, w := range warnings {
				if !strings.HasPrefix(w, "deltafit: warning: ") {
					t.Errorf("stderr has more than one line, and %q before the last is not a warning", w)
				}
			}
			if stderr != "" && !strings.HasPrefix(line, "deltafit: ") {
				t.Errorf("stderr's line does not start with \"deltafit: \": %q", stderr)
			}
			if code == 0 {
				return
			}
			if stderr == "" {
				t.Errorf("exit %d with nothing on stderr", code)
			}
			if after, err := os.ReadFile(out); err != nil || !bytes.Equal(after, previous) {
				t.Errorf("the failed run changed the output file (err %v)", err)
			}
			if entries, _ := os.ReadDir(outDir); len(entries) != 1 {
				t.Errorf("the failed run left %d files in the output directory, want only the previous output", len(entries))
			}
		})
	}
}

func orDefault(s, fallback string) string {
	if s != "" {
		return s
	}
	return fallback
}

// TestBadInputsCalm gives every file of testdata/bad to fit, and to
// predict both as data and as the model: whatever the outcome, no panic,
// no stack trace, a documented exit code and only "deltafit: " lines on
// stderr.
func TestBadInputsCalm(t *testing.T) {
	dir := badDir(t)
	data := filepath.Dir(dir)
	ms := &models{t: t, dir: t.TempDir(), data: data, made: map[string]string{}}
	model := ms.get(defaultModel)
	good := filepath.Join(dir, "good.csv")
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if strings.HasSuffix(e.Name(), ".golden") {
			continue
		}
		file := filepath.Join(dir, e.Name())
		for _, args := range [][]string{
			{"fit", file, "--target", "species"},
			{"fit", file, "--target", "species", "--folds", "2"},
			{"predict", "--model", model, file},
			{"predict", "--model", file, good},
		} {
			t.Run(e.Name()+"/"+args[0], func(t *testing.T) {
				code, stdout, stderr := runCLI(t, args)
				checkCalm(t, "stdout", stdout)
				checkCalm(t, "stderr", stderr)
				if code != exitOK && code != exitError && code != exitUsage {
					t.Errorf("exit code %d", code)
				}
				for _, line := range strings.Split(strings.TrimSuffix(stderr, "\n"), "\n") {
					if line != "" && !strings.HasPrefix(line, "deltafit: ") {
						t.Errorf("stderr line %q does not start with \"deltafit: \"", line)
					}
				}
			})
		}
	}
}
