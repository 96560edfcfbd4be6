package catalog

import (
	"errors"
	"fmt"
)

// Sentinel errors. Row and file errors wrap one of them, so callers can use
// errors.Is.
var (
	ErrNotNumber    = errors.New("not a number")
	ErrOutOfRange   = errors.New("out of range")
	ErrDuplicateID  = errors.New("duplicate id")
	ErrMissingValue = errors.New("missing value")
	ErrFieldCount   = errors.New("wrong number of fields")
	ErrMalformed    = errors.New("malformed csv")

	ErrNoFile        = errors.New("cannot open catalog file")
	ErrMissingColumn = errors.New("missing column")
	ErrBadHeader     = errors.New("bad header")
	ErrUnreadable    = errors.New("unreadable file")
	ErrBadSpec       = errors.New("bad catalog spec")
)

// RowError describes a problem with one row. Line and Column are 1-based;
// Column is the index of the field in the CSV record (0 when the problem is
// the row as a whole).
type RowError struct {
	File       string
	Line       int
	Column     int
	ColumnName string
	Value      string
	Reason     string
	Err        error // sentinel
}

func (e *RowError) Error() string {
	pos := fmt.Sprintf("%s:%d", e.File, e.Line)
	if e.Column > 0 {
		pos += fmt.Sprintf(":%d", e.Column)
	}
	if e.ColumnName != "" {
		return fmt.Sprintf("%s: column %q value %q: %s", pos, e.ColumnName, e.Value, e.Reason)
	}
	return fmt.Sprintf("%s: %s", pos, e.Reason)
}

func (e *RowError) Unwrap() error { return e.Err }

// FileError is a problem that stops the whole file: it cannot be opened,
// decompressed or its header does not fit the spec. Line and Column are 0
// when unknown.
type FileError struct {
	File   string
	Line   int
	Column int
	Reason string
	Err    error
}

func (e *FileError) Error() string {
	pos := e.File
	if e.Line > 0 {
		pos += fmt.Sprintf(":%d", e.Line)
		if e.Column > 0 {
			pos += fmt.Sprintf(":%d", e.Column)
		}
	}
	return pos + ": " + e.Reason
}

func (e *FileError) Unwrap() error { return e.Err }
