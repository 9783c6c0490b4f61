package main

import (
	"bytes"
	"context"
	"encoding/binary"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files of testdata/bad, and testdata/iris.parquet and iris.arrows")

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
// directory by the test, as NAME.csv unless generatedExt says otherwise.
var generatedCases = map[string]func() []byte{
	// MaxColumns: an Arrow schema of 4 MB that lists one field a million
	// times; arrow-go would build a million fields.
	"gen_arrow_schema_1m_fields": func() []byte { return arrowStreamRepeatedField(1 << 20) },
	// MaxCellBytes, checked while reading: a 64 MB cell is refused before
	// the CSV parser holds it.
	"gen_cell_64mb": func() []byte {
		return []byte("x,species\n" + strings.Repeat("a", 64<<20) + ",setosa\nb,versicolor\n")
	},
	// MaxRecordBytes: 20 cells just under MaxCellBytes in one row.
	"gen_record_20mb": func() []byte {
		var header strings.Builder
		for i := range 20 {
			fmt.Fprintf(&header, "c%d,", i)
		}
		cell := strings.Repeat("a", 1<<20-1)
		return []byte(header.String() + "species\n" + strings.Repeat(cell+",", 20) + "setosa\n")
	},
	// A stray word of 1 MB in a numeric column: the message shows its
	// first characters and its length, not the whole cell.
	"gen_stray_word_1mb": func() []byte {
		return []byte("x,species\n1,setosa\n2,versicolor\n3,setosa\n" + strings.Repeat("z", 1<<20-1) + ",versicolor\n")
	},
	// A wide table: 100,000 columns, 4 rows; read in small batches.
	"gen_wide_100k_columns": func() []byte {
		var b strings.Builder
		for i := range 99_999 {
			fmt.Fprintf(&b, "c%d,", i)
		}
		b.WriteString("species\n")
		for row := range 4 {
			for i := range 99_999 {
				fmt.Fprintf(&b, "%d,", (i*7+row*3)%10)
			}
			b.WriteString([]string{"setosa\n", "versicolor\n"}[row%2])
		}
		return []byte(b.String())
	},
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
	// A model whose first class label is over MaxCellBytes: the model
	// reader refuses what the CSV reader would refuse as a cell.
	"gen_model_label_2mb": func() []byte {
		b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "bad", "model_unknown_rule.json"))
		if err != nil {
			panic(err)
		}
		text := strings.Replace(string(b), `"perceptron"`, `"delta"`, 1)
		return []byte(strings.Replace(text, `"setosa",`, `"`+strings.Repeat("s", 2<<20)+`",`, 1))
	},
	// model.MaxClasses: 1,001 classes are refused before any training, as
	// a model file of them could not be read back.
	"gen_classes_1001": func() []byte {
		var b strings.Builder
		b.WriteString("x,kind\n")
		for i := range 1001 {
			fmt.Fprintf(&b, "%d,k%d\n", i%7, i)
		}
		return []byte(b.String())
	},
	// An open quote in the first row swallows the rest of a 3 MB file.
	"gen_open_quote_3mb": func() []byte {
		return []byte("x,species\n\"1,setosa\n" + strings.Repeat("2,versicolor\n", 3<<20/13))
	},
}

var generatedExt = map[string]string{"gen_arrow_schema_1m_fields": ".arrows", "gen_model_label_2mb": ".json"}

// arrowStreamRepeatedField is an Arrow IPC stream whose schema lists one
// float64 field "x" n times, 4 bytes a field, and no record batch. It is
// laid out by hand after the FlatBuffers binary format and Arrow's
// Message.fbs and Schema.fbs: a Message (version V5, header Schema) whose
// Schema's field vector points n times at the same Field table.
func arrowStreamRepeatedField(n int) []byte {
	le := binary.LittleEndian
	var b []byte
	u8 := func(v uint8) { b = append(b, v) }
	u16 := func(v uint16) { b = le.AppendUint16(b, v) }
	u32 := func(v uint32) { b = le.AppendUint32(b, v) }
	// offset writes at pos the unsigned offset from pos to target.
	offset := func(pos, target int) { le.PutUint32(b[pos:], uint32(target-pos)) }
	pad := func() {
		for len(b)%4 != 0 {
			u8(0)
		}
	}
	u32(0) // root: the Message table
	// Message vtable: 3 fields (version, header_type, header), table 12 bytes.
	msgVtable := len(b)
	u16(10)
	u16(12)
	u16(4)
	u16(6)
	u16(8)
	pad()
	msg := len(b)
	offset(0, msg)
	u32(uint32(msg - msgVtable)) // soffset to the vtable
	u16(4)                       // version V5
	u8(1)                        // header type Schema
	u8(0)
	u32(0) // header, set below
	// Schema vtable: field 1 (fields) only, table 8 bytes.
	schemaVtable := len(b)
	u16(8)
	u16(8)
	u16(0)
	u16(4)
	schema := len(b)
	offset(msg+8, schema)
	u32(uint32(schema - schemaVtable))
	u32(0) // fields, set below
	vector := len(b)
	offset(schema+4, vector)
	u32(uint32(n))
	entries := len(b)
	b = append(b, make([]byte, 4*n)...)
	// Field vtable: name, nullable, type_type, type; table 16 bytes.
	fieldVtable := len(b)
	u16(12)
	u16(16)
	u16(4)
	u16(13)
	u16(12)
	u16(8)
	field := len(b)
	for i := range n {
		offset(entries+4*i, field)
	}
	u32(uint32(field - fieldVtable))
	u32(0) // name, set below
	u32(0) // type, set below
	u8(3)  // type_type FloatingPoint
	u8(1)  // nullable
	u16(0)
	// FloatingPoint vtable: precision; table 8 bytes.
	floatVtable := len(b)
	u16(6)
	u16(8)
	u16(4)
	pad()
	float := len(b)
	offset(field+8, float)
	u32(uint32(float - floatVtable))
	u16(2) // DOUBLE
	u16(0)
	name := len(b)
	offset(field+4, name)
	u32(1)
	b = append(b, 'x', 0)
	for len(b)%8 != 0 {
		u8(0)
	}
	stream := le.AppendUint32(nil, 0xffffffff)
	stream = le.AppendUint32(stream, uint32(len(b)))
	stream = append(stream, b...)
	stream = le.AppendUint32(stream, 0xffffffff)
	return le.AppendUint32(stream, 0) // end of stream
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
				file = filepath.Join(gen, c.name+orDefault(generatedExt[c.name], ".csv"))
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
