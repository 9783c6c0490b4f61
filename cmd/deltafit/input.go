package main

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"strings"
	"unicode/utf8"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/spf13/pflag"

	"deltafit/export"
	"deltafit/ingest"
	"deltafit/ingest/tabular"
)

// inputFlags are the flags every command that reads a table shares.
type inputFlags struct {
	delimiter string
	format    string
	kinds     []string
	na        []string
}

func (f *inputFlags) add(fs *pflag.FlagSet) {
	fs.StringVar(&f.delimiter, "delimiter", ",", `CSV field delimiter: one character, or "tab"`)
	fs.StringVar(&f.format, "input-format", "auto", "input format: auto, csv, arrow or parquet")
	fs.StringArrayVar(&f.kinds, "kind", nil, "declare a column's kind, as COLUMN=numeric|categorical|boolean (repeatable)")
	fs.StringSliceVar(&f.na, "na", nil, `cell texts that mean missing in CSV, besides the empty cell and NA (comma-separated, such as "?")`)
}

func (f *inputFlags) readOptions() (ingest.ReadOptions, error) {
	opts := ingest.ReadOptions{Missing: f.na}
	format, err := ingest.ParseFormat(f.format)
	if err != nil {
		return opts, usageError{err}
	}
	opts.Format = format
	switch d := f.delimiter; {
	case d == "tab" || d == `\t`:
		opts.Delimiter = '\t'
	case len([]rune(d)) == 1 && utf8.ValidString(d) && d != "\n" && d != "\r" && d != `"` && d != "\x00" && d != string(utf8.RuneError):
		opts.Delimiter = []rune(d)[0]
	default:
		// encoding/csv refuses U+FFFD (and invalid UTF-8, which reads as it).
		return opts, usagef("--delimiter %q: give one character (not a quote, line break, NUL or U+FFFD), or \"tab\"", d)
	}
	for _, kv := range f.kinds {
		col, kind, ok := strings.Cut(kv, "=")
		if !ok || col == "" {
			return opts, usagef("--kind %q: write COLUMN=numeric, COLUMN=categorical or COLUMN=boolean", kv)
		}
		k, err := tabular.ParseKind(kind)
		if err != nil {
			return opts, usagef("--kind %q: %v", kv, err)
		}
		if opts.Kinds == nil {
			opts.Kinds = map[string]tabular.Kind{}
		}
		if _, twice := opts.Kinds[col]; twice {
			return opts, usagef("--kind: column %q is given a kind twice; give one", col)
		}
		opts.Kinds[col] = k
	}
	return opts, nil
}

// readTable reads a whole table from a path or "-" (stdin) and returns it
// with the sha256 of the bytes read. The reader's warnings go to stderr.
func readTable(path string, stdin io.Reader, stderr io.Writer, opts ingest.ReadOptions) (*tabular.Table, string, error) {
	t, sha, _, err := readTableKeeping(path, stdin, stderr, opts, nil)
	return t, sha, err
}

// keptColumns are input columns held as the input has them, to pass
// through (--keep) beside a table read whole.
type keptColumns struct {
	fields []arrow.Field   // output fields (export.KeepField)
	arrays []arrow.Array   // each column's cells, every row of the input
	chunks [][]arrow.Array // the batches' arrays while reading
	index  []int           // the columns' positions in the input
}

func (k *keptColumns) release() {
	for _, a := range k.arrays {
		a.Release()
	}
	for _, chunks := range k.chunks {
		for _, a := range chunks {
			a.Release()
		}
	}
}

// keepingReader passes record batches on to Collect, keeping the arrays
// of the kept columns.
type keepingReader struct {
	array.RecordReader
	kept *keptColumns
}

func (r keepingReader) Next() bool {
	if !r.RecordReader.Next() {
		return false
	}
	rec := r.RecordReader.RecordBatch()
	for i, c := range r.kept.index {
		a := rec.Column(c)
		a.Retain()
		r.kept.chunks[i] = append(r.kept.chunks[i], a)
	}
	return true
}

// inPlace returns f for ingest.ReadOptions.Source when it is a regular
// file, which Parquet is then read from in place; nil otherwise (a pipe, a
// FIFO, a terminal).
func inPlace(f *os.File) *io.SectionReader {
	fi, err := f.Stat()
	if err != nil || !fi.Mode().IsRegular() {
		return nil
	}
	return io.NewSectionReader(f, 0, fi.Size())
}

// readTableKeeping reads a whole table as readTable does, keeping the
// named columns as the input holds them; the caller releases them.
func readTableKeeping(path string, stdin io.Reader, stderr io.Writer, opts ingest.ReadOptions, keep []string) (*tabular.Table, string, *keptColumns, error) {
	var count *countingReader
	opts.Warn = func(w *tabular.DataError) {
		count.progress.finish() // a warning comes at the end of the input
		fmt.Fprintf(stderr, "deltafit: warning: %v\n", w)
	}
	var r io.Reader = stdin
	var file *os.File
	if path != "-" {
		f, err := os.Open(path)
		if err != nil {
			return nil, "", nil, fmt.Errorf("cannot open the data: %w", err)
		}
		defer f.Close()
		r, file = f, f
		opts.Source = inPlace(f)
	}
	count = &countingReader{r: r, progress: newReadProgress(stderr, file)}
	defer count.progress.finish()
	h := sha256.New()
	rr, err := ingest.NewRecordReader(path, io.TeeReader(count, h), opts)
	if err != nil {
		return nil, "", nil, err
	}
	defer rr.Release()
	kept := &keptColumns{chunks: make([][]arrow.Array, len(keep))}
	if kept.fields, kept.index, err = keepFields(path, rr.Schema(), keep); err != nil {
		return nil, "", nil, err
	}
	t, err := ingest.Collect(path, keepingReader{RecordReader: rr, kept: kept}, opts)
	if err != nil {
		kept.release()
		return nil, "", nil, err
	}
	for _, chunks := range kept.chunks {
		joined, err := array.Concatenate(chunks, memory.DefaultAllocator)
		if err != nil {
			kept.release()
			return nil, "", nil, fmt.Errorf("%s: --keep: %w", tabular.DisplayName(path), err)
		}
		kept.arrays = append(kept.arrays, joined)
	}
	for _, chunks := range kept.chunks {
		for _, a := range chunks {
			a.Release()
		}
	}
	kept.chunks = nil
	if _, err := io.Copy(h, count); err != nil {
		kept.release()
		return nil, "", nil, fmt.Errorf("%s: %w", path, err)
	}
	return t, hex.EncodeToString(h.Sum(nil)), kept, nil
}

// reportFormat parses --format, as a usage error when it is not a format.
func reportFormat(s string) (export.Format, error) {
	format, err := export.ParseFormat(s)
	if err != nil {
		return "", usagef("--format %q: give text, json or markdown", s)
	}
	return format, nil
}

// checkOutput refuses an output path that names an input file (the data,
// or predict's model), which writing would replace.
func checkOutput(output, input string) error {
	return checkOutputPath("-o", output, input)
}

// checkOutputPath checks, before any work starts, an output path given
// with flag: not an input of the command (writing would replace it), not a
// directory, and in a directory that exists and can be written. "" and "-"
// (stdout) pass. Messages name the path as the user gave it.
func checkOutputPath(flag, output string, inputs ...string) error {
	if output == "" || output == "-" {
		return nil
	}
	out, err := os.Stat(output)
	if err == nil {
		for _, input := range inputs {
			if input == "" || input == "-" {
				continue
			}
			if in, err := os.Stat(input); err == nil && os.SameFile(in, out) {
				return usagef("%s %s is also an input of this command; writing it would replace the input", flag, output)
			}
		}
	}
	return export.CheckWritable(output)
}
