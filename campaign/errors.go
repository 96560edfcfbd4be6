package campaign

import (
	"errors"
	"fmt"
	"strings"
)

// Sentinel errors, wrapped by *Error.
var (
	ErrRead         = errors.New("cannot read campaign file")
	ErrSyntax       = errors.New("not valid TOML or a value of the wrong type")
	ErrUnknownKey   = errors.New("unknown key")
	ErrUnknownField = errors.New("unknown canonical field")
	ErrBadUnit      = errors.New("unknown unit")
	ErrBadValue     = errors.New("invalid value")
	ErrMissing      = errors.New("missing required key")
)

// Error is one problem in a campaign file. Line is 1-based, 0 if unknown.
type Error struct {
	File string
	Line int
	Key  string // dotted key, catalogs numbered from 1: "catalog[2].role"
	Msg  string
	Err  error // sentinel
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
	}
	b.WriteString(": ")
	if e.Key != "" {
		b.WriteString(e.Key + ": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

func (e *Error) Unwrap() error { return e.Err }

// Errors is every problem found in one file, in the order checked.
type Errors []*Error

func (es Errors) Error() string {
	s := make([]string, len(es))
	for i, e := range es {
		s[i] = e.Error()
	}
	return strings.Join(s, "\n")
}

func (es Errors) Unwrap() []error {
	out := make([]error, len(es))
	for i, e := range es {
		out[i] = e
	}
	return out
}
