package catalog

import (
	"errors"
	"fmt"

	"starvet/internal/position"
)

// Sentinel errors. Row and file errors are *position.Error values wrapping
// one of them, so callers can use errors.Is.
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

// fileError is a problem that stops the whole file: it cannot be opened or
// decompressed, or its header does not fit the spec. line and col are 0
// when unknown.
func fileError(file string, line, col int, name, msg string, err error) *position.Error {
	return &position.Error{File: file, Line: line, Col: col, Name: name, Msg: msg, Err: err}
}

// WrapFileError is a problem that stops the whole file, met by a reader:
// "file[:line]: msg cause", wrapping both sentinel and cause. line is 0
// when unknown.
func WrapFileError(file string, line int, msg string, sentinel, cause error) *position.Error {
	return fileError(file, line, 0, "", msg+cause.Error(), fmt.Errorf("%w: %w", sentinel, cause))
}

// Error is the quarantined row as the fatal error of a strict read:
// "file:line:col: column "NAME" value "V": reason", or "file:line: reason"
// for the row as a whole.
func (q *Quarantine) Error(file string) *position.Error {
	e := &position.Error{File: file, Line: q.Line, Row: int64(q.Row), Col: q.Column, Name: q.ColumnName, Msg: q.Reason, Err: q.Err}
	if q.ColumnName != "" {
		e.What = fmt.Sprintf("column %q value %q", q.ColumnName, q.Value)
	}
	return e
}
