package main

import (
	"fmt"
	"io"

	"github.com/spf13/pflag"

	"deltafit/ingest/tabular"
)

// missingPolicy is the --missing flag of the commands that learn from
// labelled rows (fit, check).
type missingPolicy struct {
	mode string
}

func (m *missingPolicy) add(fs *pflag.FlagSet) {
	fs.StringVar(&m.mode, "missing", "indicator", `rows with missing cells: "indicator" keeps them, with a unit per column that marks its missing cells; "drop" leaves them out (counted on stderr)`)
}

func (m *missingPolicy) check() error {
	if m.mode != "indicator" && m.mode != "drop" {
		return usagef(`--missing %q: give "indicator" or "drop"`, m.mode)
	}
	return nil
}

// apply leaves out the rows of t that cannot be learned from: those with no
// target value always, and with --missing drop those with a missing cell in
// a column the dataset uses. Each leaving out is a warning on stderr with
// its count and the first row; the rows kept keep their input row numbers.
func (m *missingPolicy) apply(t *tabular.Table, target string, ignore []string, stderr io.Writer) *tabular.Table {
	name := tabular.DisplayName(t.Name)
	noTarget := tabular.MissingTarget(t, target)
	t = dropRows(t, func(i int) bool { return !noTarget(i) }, stderr,
		name+": %d %s with no target value left out (first at row %d): a row needs its class to be learned from or scored")
	if m.mode != "drop" {
		return t
	}
	var used []*tabular.Column
	for _, c := range t.Columns {
		if c.Missing != nil && !contains(ignore, c.Name) {
			used = append(used, c)
		}
	}
	complete := func(i int) bool {
		for _, c := range used {
			if c.IsMissing(i) {
				return false
			}
		}
		return true
	}
	return dropRows(t, complete, stderr, name+": %d %s with a missing cell left out by --missing drop (first at row %d)")
}

// dropRows keeps the rows of t that keep accepts and, if any is left out,
// warns with format (count, "row" or "rows", first row left out).
func dropRows(t *tabular.Table, keep func(int) bool, stderr io.Writer, format string) *tabular.Table {
	var left rowsLeftOut
	kept := left.drop(t, func(i int) bool { return !keep(i) })
	left.warn(stderr, format)
	return kept
}

// rowsLeftOut counts rows left out of batch after batch, with the input
// number of the first.
type rowsLeftOut struct {
	count, first int
}

// drop returns the rows of t that leave does not pick, counting those it
// does; the rows kept keep their input row numbers.
func (r *rowsLeftOut) drop(t *tabular.Table, leave func(int) bool) *tabular.Table {
	if r.count == 0 {
		for i := range t.Rows {
			if leave(i) {
				r.first = t.RowNumber(i)
				break
			}
		}
	}
	kept, dropped := t.DropRows(func(i int) bool { return !leave(i) })
	r.count += dropped
	return kept
}

// warn prints format (count, "row" or "rows", first row left out) as a
// warning if any row was left out.
func (r *rowsLeftOut) warn(stderr io.Writer, format string) {
	if r.count == 0 {
		return
	}
	rows := "rows"
	if r.count == 1 {
		rows = "row"
	}
	fmt.Fprintf(stderr, "deltafit: warning: "+format+"\n", r.count, rows, r.first)
}

func contains(list []string, s string) bool {
	for _, v := range list {
		if v == s {
			return true
		}
	}
	return false
}
