package tabular

import (
	"fmt"
	"strings"
)

// DataError reports a problem with the input data at a position.
// Zero fields are unknown and left out of the message.
type DataError struct {
	File   string // file name as given by the user ("-" is shown as "stdin")
	Row    int    // 1-based data row, 0 if unknown
	Line   int    // 1-based line in a text file, used when Row is unknown
	Column int    // 1-based column, 0 if unknown
	Name   string // column name, "" if unknown
	Err    error
}

func (e *DataError) Error() string {
	var b strings.Builder
	b.WriteString(DisplayName(e.File))
	var pos []string
	switch {
	case e.Row > 0 && e.Line > 0:
		pos = append(pos, fmt.Sprintf("row %d (line %d)", e.Row, e.Line))
	case e.Row > 0:
		pos = append(pos, fmt.Sprintf("row %d", e.Row))
	case e.Line > 0:
		pos = append(pos, fmt.Sprintf("line %d", e.Line))
	}
	switch {
	case e.Column > 0 && e.Name != "":
		pos = append(pos, fmt.Sprintf("column %d (%s)", e.Column, e.Name))
	case e.Column > 0:
		pos = append(pos, fmt.Sprintf("column %d", e.Column))
	case e.Name != "":
		pos = append(pos, fmt.Sprintf("column %s", e.Name))
	}
	if len(pos) > 0 {
		b.WriteString(": ")
		b.WriteString(strings.Join(pos, ", "))
	}
	b.WriteString(": ")
	b.WriteString(e.Err.Error())
	return b.String()
}

func (e *DataError) Unwrap() error { return e.Err }

// DisplayName is how messages name an input: "stdin" for "-" or "".
func DisplayName(file string) string {
	if file == "" || file == "-" {
		return "stdin"
	}
	return file
}
