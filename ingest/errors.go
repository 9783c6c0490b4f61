package ingest

import "errors"

// Sentinel errors that callers may branch on with errors.Is.
var (
	ErrEmpty       = errors.New("the input is empty")
	ErrNoRows      = errors.New("the input has a header but no data rows")
	ErrUnsupported = errors.New("unsupported input")
	ErrNoColumn    = errors.New("no such column")
)
