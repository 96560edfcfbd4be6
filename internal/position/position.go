// Package position is the one shape of an error about a place in an input
// file: a text file's line and column (a catalog in CSV or ECSV, a campaign
// or rule file in TOML), or a binary table's row and column name (FITS,
// VOTable binary streams, Parquet). Catalog ingest, rules and campaign all
// report through it, so every message reads "file:line:column: what: why".
package position

import (
	"fmt"
	"strings"
)

// Error is one problem at one place. The zero value of a position field
// means "unknown" or "not applicable".
type Error struct {
	File string
	Line int    // 1-based line of a text file
	Col  int    // 1-based column: a character in TOML, a field in a delimited row
	Row  int64  // 1-based row of a binary table (files without lines)
	Name string // the bare key, rule id or column name, for programs
	What string // what the problem is about, as people read it: `column "ra" value "x"`, `rule "snr"`, `kinematics.samples`
	Msg  string
	Err  error // a sentinel, for errors.Is
}

// Where is the position part of the message: "file:line:col", or
// "file: row N" for a binary table.
func (e *Error) Where() string {
	var b strings.Builder
	b.WriteString(e.File)
	switch {
	case e.Line > 0:
		fmt.Fprintf(&b, ":%d", e.Line)
		if e.Col > 0 {
			fmt.Fprintf(&b, ":%d", e.Col)
		}
	case e.Row > 0:
		fmt.Fprintf(&b, ": row %d", e.Row)
	}
	return b.String()
}

func (e *Error) Error() string {
	s := e.Where() + ": "
	if e.What != "" {
		s += e.What + ": "
	}
	return s + e.Msg
}

func (e *Error) Unwrap() error { return e.Err }

// Errors is every problem found in one file, in the order reported.
type Errors []*Error

func (es Errors) Error() string {
	s := make([]string, len(es))
	for i, e := range es {
		s[i] = e.Error()
	}
	return strings.Join(s, "\n")
}

// Unwrap lets errors.Is and errors.As reach every problem and its sentinel.
func (es Errors) Unwrap() []error {
	out := make([]error, len(es))
	for i, e := range es {
		out[i] = e
	}
	return out
}
