package tabular

import (
	"fmt"
	"strconv"
)

// Kind is what a column holds, which decides how a Plan encodes it.
type Kind int

const (
	Numeric Kind = iota
	Categorical
	Boolean
)

var kindNames = [...]string{Numeric: "numeric", Categorical: "categorical", Boolean: "boolean"}

func (k Kind) String() string {
	if k < 0 || int(k) >= len(kindNames) {
		return fmt.Sprintf("Kind(%d)", int(k))
	}
	return kindNames[k]
}

// ParseKind parses "numeric", "categorical" or "boolean".
func ParseKind(s string) (Kind, error) {
	for k, name := range kindNames {
		if s == name {
			return Kind(k), nil
		}
	}
	return 0, fmt.Errorf("ingest: unknown column kind %q (want numeric, categorical or boolean)", s)
}

func (k Kind) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

func (k *Kind) UnmarshalText(b []byte) error {
	parsed, err := ParseKind(string(b))
	if err != nil {
		return err
	}
	*k = parsed
	return nil
}

// Column is one column of a Table.
type Column struct {
	Name string
	Kind Kind
	// Numbers holds the values of a Numeric column and 0/1 for a Boolean
	// one. Missing rows hold 0.
	Numbers []float64
	// Text holds the values of a Categorical column. Missing rows hold "".
	Text []string
	// Missing marks missing cells; nil when no cell is missing.
	Missing []bool
	// LabelText marks a column of class labels kept as written because it
	// is the target, though its kind was not declared: its values may
	// all be numbers.
	LabelText bool
}

// Len is the number of rows.
func (c *Column) Len() int {
	if c.Kind == Categorical {
		return len(c.Text)
	}
	return len(c.Numbers)
}

// IsMissing reports whether row i (0-based) is missing.
func (c *Column) IsMissing(i int) bool { return c.Missing != nil && c.Missing[i] }

// Slice returns rows [lo, hi) of c as a column of its own that shares c's
// cells, as a batch of a TableReader holds them. It panics if the range is
// outside the column.
func (c *Column) Slice(lo, hi int) *Column {
	s := *c
	if c.Numbers != nil {
		s.Numbers = c.Numbers[lo:hi]
	}
	if c.Text != nil {
		s.Text = c.Text[lo:hi]
	}
	if c.Missing != nil {
		s.Missing = c.Missing[lo:hi]
	}
	return &s
}

// MissingCount is the number of missing cells.
func (c *Column) MissingCount() int {
	n := 0
	for _, m := range c.Missing {
		if m {
			n++
		}
	}
	return n
}

// Value formats row i (0-based) as text; missing cells are "".
func (c *Column) Value(i int) string {
	if c.IsMissing(i) {
		return ""
	}
	switch c.Kind {
	case Categorical:
		return c.Text[i]
	case Boolean:
		return strconv.FormatBool(c.Numbers[i] != 0)
	default:
		return strconv.FormatFloat(c.Numbers[i], 'g', -1, 64)
	}
}

// Table is a set of equally long named columns held in memory.
type Table struct {
	Name    string // where the table came from, for messages
	Rows    int
	Columns []*Column
	// RowNumbers holds the 1-based row number in the input of each row,
	// when rows were left out after reading (DropRows) or the table is a
	// batch of a longer input; nil means row i is input row i+1.
	RowNumbers []int
	// ColumnNumbers holds the 1-based position in the input of each
	// column, when the table holds some of the input's columns (a batch
	// read by ingest.TableReader); nil means column i is input column i+1.
	ColumnNumbers []int
}

// RowNumber returns the 1-based row number in the input of row i (0-based),
// the number every message and output shows.
func (t *Table) RowNumber(i int) int {
	if t.RowNumbers == nil {
		return i + 1
	}
	return t.RowNumbers[i]
}

// DropRows returns a table of the rows of t that keep accepts, in order,
// each keeping its row number in the input, and how many were left out. t
// is not modified; when no row is left out, t itself is returned.
func (t *Table) DropRows(keep func(row int) bool) (*Table, int) {
	var kept []int
	for i := range t.Rows {
		if keep(i) {
			kept = append(kept, i)
		}
	}
	if len(kept) == t.Rows {
		return t, 0
	}
	out := &Table{Name: t.Name, Rows: len(kept), RowNumbers: make([]int, len(kept)), ColumnNumbers: t.ColumnNumbers}
	for n, i := range kept {
		out.RowNumbers[n] = t.RowNumber(i)
	}
	for _, c := range t.Columns {
		nc := &Column{Name: c.Name, Kind: c.Kind, LabelText: c.LabelText}
		if c.Numbers != nil {
			nc.Numbers = make([]float64, len(kept))
		}
		if c.Text != nil {
			nc.Text = make([]string, len(kept))
		}
		for n, i := range kept {
			if c.Numbers != nil {
				nc.Numbers[n] = c.Numbers[i]
			}
			if c.Text != nil {
				nc.Text[n] = c.Text[i]
			}
			if c.IsMissing(i) {
				if nc.Missing == nil {
					nc.Missing = make([]bool, len(kept))
				}
				nc.Missing[n] = true
			}
		}
		out.Columns = append(out.Columns, nc)
	}
	return out, t.Rows - len(kept)
}

// Column returns the column with the given name, or nil.
func (t *Table) Column(name string) *Column {
	for _, c := range t.Columns {
		if c.Name == name {
			return c
		}
	}
	return nil
}

// Position returns the 1-based position in the input of the column with
// the given name, the number messages show, or 0 if there is none.
func (t *Table) Position(name string) int {
	i := t.Index(name)
	switch {
	case i < 0:
		return 0
	case t.ColumnNumbers == nil:
		return i + 1
	}
	return t.ColumnNumbers[i]
}

// Index returns the 0-based position of the column with the given name,
// or -1.
func (t *Table) Index(name string) int {
	for i, c := range t.Columns {
		if c.Name == name {
			return i
		}
	}
	return -1
}
