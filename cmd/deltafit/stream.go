package main

import (
	"bufio"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"hash"
	"io"
	"os"
	"slices"
	"strings"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/spf13/pflag"

	"deltafit/export"
	"deltafit/ingest"
	"deltafit/ingest/tabular"
)

// dataStream reads DATA batch by batch: the columns asked for as small
// tables (ingest.TableReader), every column as the input holds it for the
// columns passed through.
type dataStream struct {
	*ingest.TableReader
	path  string
	in    io.Reader
	file  *os.File
	rr    array.RecordReader
	hash  hash.Hash // of the bytes read, when asked for
	count *countingReader
}

// openStream opens DATA (a path, or "-" for stdin) and reads the named
// columns with the kinds in opts. With hashed, the bytes read are hashed
// (sha256 returns the sum). Warnings go to stderr, the progress of reading
// a large input to progressOut (see progressTo).
func openStream(path string, stdin io.Reader, stderr, progressOut io.Writer, opts ingest.ReadOptions, columns []string, hashed bool) (*dataStream, error) {
	s := &dataStream{path: path, in: stdin}
	opts.Warn = func(w *tabular.DataError) {
		s.count.progress.finish() // a warning comes at the end of the input
		fmt.Fprintf(stderr, "deltafit: warning: %v\n", w)
	}
	if path != "-" {
		f, err := os.Open(path)
		if err != nil {
			return nil, fmt.Errorf("cannot open the data: %w", err)
		}
		s.file, s.in = f, f
		opts.Source = inPlace(f)
	}
	s.count = &countingReader{r: s.in, progress: newReadProgress(progressOut, s.file)}
	var r io.Reader = s.count
	if hashed {
		s.hash = sha256.New()
		r = io.TeeReader(r, s.hash)
	}
	rr, err := ingest.NewRecordReader(path, r, opts)
	if err != nil {
		s.close()
		return nil, err
	}
	s.rr = rr
	if s.TableReader, err = ingest.NewTableReader(path, rr, columns, opts); err != nil {
		s.close()
		return nil, err
	}
	return s, nil
}

func (s *dataStream) close() {
	s.count.progress.finish()
	if s.TableReader != nil {
		s.TableReader.Close()
	}
	if s.rr != nil {
		s.rr.Release()
	}
	if s.file != nil {
		s.file.Close()
	}
}

// sha256 reads what is left of the input into the hash and returns the
// sum, in hex.
func (s *dataStream) sha256() (string, error) {
	if _, err := io.Copy(s.hash, s.count); err != nil {
		return "", fmt.Errorf("%s: %w", tabular.DisplayName(s.path), err)
	}
	return hex.EncodeToString(s.hash.Sum(nil)), nil
}

// keepFields finds the --keep columns in the input and returns their
// output fields and positions.
func (s *dataStream) keepFields(keep []string) ([]arrow.Field, []int, error) {
	return keepFields(s.path, s.Schema(), keep)
}

// keepFields finds the --keep columns in schema, the input's, and returns
// their output fields and positions.
func keepFields(path string, schema *arrow.Schema, keep []string) ([]arrow.Field, []int, error) {
	fields := make([]arrow.Field, len(keep))
	index := make([]int, len(keep))
	for i, name := range keep {
		found := schema.FieldIndices(name)
		if len(found) == 0 {
			return nil, nil, &tabular.DataError{File: path, Name: name, Err: fmt.Errorf("--keep names this column but the input does not have it; the columns are %s", columnNames(schema, 20))}
		}
		f, err := export.KeepField(schema.Field(found[0]))
		if err != nil {
			return nil, nil, &tabular.DataError{File: path, Column: found[0] + 1, Name: name, Err: err}
		}
		fields[i], index[i] = f, found[0]
	}
	return fields, index, nil
}

// releaseArrays releases arrays retained to outlive their batch.
func releaseArrays(arrays []arrow.Array) {
	for _, a := range arrays {
		a.Release()
	}
}

// keepArrays returns the current batch's kept columns.
func (s *dataStream) keepArrays(index []int) []arrow.Array {
	rec := s.RecordBatch()
	arrays := make([]arrow.Array, len(index))
	for i, k := range index {
		arrays[i] = rec.Column(k)
	}
	return arrays
}

// columnNames lists the first few column names of schema, for messages.
func columnNames(schema *arrow.Schema, most int) string {
	var names []string
	for i, f := range schema.Fields() {
		if i == most {
			names = append(names, fmt.Sprintf("… (%d in all)", schema.NumFields()))
			break
		}
		names = append(names, f.Name)
	}
	return strings.Join(names, ", ")
}

// countingReader counts the bytes read through it and shows them as
// progress.
type countingReader struct {
	r        io.Reader
	n        int64
	progress *readProgress
}

func (c *countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += int64(n)
	c.progress.read(c.n)
	return n, err
}

// progressTo is where a command that writes rows as it reads shows its
// progress: stderr, unless the rows go to the same terminal, where a bar
// would be drawn over them.
func progressTo(stdout, stderr io.Writer, toFile bool) io.Writer {
	if !toFile && terminal(stdout) {
		return io.Discard
	}
	return stderr
}

// tableOutput are the output flags of the commands that write tables of
// rows (predict, encode).
type tableOutput struct {
	output      string
	format      string
	keep        []string
	csvTextAsIs bool
}

func (o *tableOutput) add(fs *pflag.FlagSet, what string) {
	fs.StringVarP(&o.output, "output", "o", "", "write the "+what+" here, atomically, instead of to stdout (- is stdout)")
	fs.StringVar(&o.format, "format", string(export.TableCSV), "output format: csv, jsonl (JSON Lines), arrow (an Arrow IPC stream) or parquet")
	fs.StringSliceVar(&o.keep, "keep", nil, "input columns to copy into the output, first, with their types, such as an id (comma-separated)")
	addCSVTextAsIs(fs, &o.csvTextAsIs)
}

// addCSVTextAsIs adds --csv-text-as-is, which every command that writes
// CSV takes.
func addCSVTextAsIs(fs *pflag.FlagSet, asIs *bool) {
	fs.BoolVar(asIs, "csv-text-as-is", false, "in CSV output, write text cells as they are; by default a text cell beginning with =, +, -, @, tab or CR that is not a number gets a ' before it, so that a spreadsheet does not run it as a formula")
}

// tableFormat checks --format and --keep.
func (o *tableOutput) tableFormat() (export.TableFormat, error) {
	format, err := export.ParseTableFormat(o.format)
	if err != nil {
		return "", usagef("--format %q: give csv, jsonl, arrow or parquet", o.format)
	}
	for i, col := range o.keep {
		if col == "" {
			return "", usagef("--keep %q: a column name is empty; separate names with single commas", strings.Join(o.keep, ","))
		}
		if slices.Contains(o.keep[:i], col) {
			return "", usagef("--keep: column %q is named twice", col)
		}
	}
	return format, nil
}

// tableOptions are the writers' options the flags give.
func (o *tableOutput) tableOptions() []export.TableOption {
	return []export.TableOption{export.CSVTextAsIs(o.csvTextAsIs)}
}

// toFile reports whether the output goes to a file rather than stdout.
func (o *tableOutput) toFile() bool { return o.output != "" && o.output != "-" }

// write runs write on the output: atomically into the -o file, or on
// stdout through a buffer that is flushed after each batch (flush), so
// that a reader down the pipe gets the rows as they are made.
func (o *tableOutput) write(stdout io.Writer, write func(w io.Writer, flush func() error) error) error {
	if o.toFile() {
		return export.WriteFile(o.output, func(w io.Writer) error {
			return write(w, func() error { return nil })
		})
	}
	bw := bufio.NewWriterSize(stdout, 64<<10)
	if err := write(bw, bw.Flush); err != nil {
		return err
	}
	return bw.Flush()
}

// overlap runs produce in a goroutine of its own and consume, in the
// caller's, on each item produce hands to emit, in order: making the next
// item overlaps using the last. An error of consume stops produce (emit
// then returns false, and produce should return); the first error of
// consume, else produce's, is returned. Items that consume never gets are
// given to release.
func overlap[T any](produce func(emit func(T) bool) error, consume func(T) error, release func(T)) error {
	items := make(chan T, 2)
	stop := make(chan struct{})
	var produceErr error
	go func() {
		defer close(items)
		produceErr = produce(func(item T) bool {
			select {
			case items <- item:
				return true
			case <-stop:
				release(item)
				return false
			}
		})
	}()
	var consumeErr error
	for item := range items {
		if consumeErr != nil {
			release(item)
			continue
		}
		if consumeErr = consume(item); consumeErr != nil {
			close(stop)
		}
	}
	if consumeErr != nil {
		return consumeErr
	}
	return produceErr
}
