package rules

import (
	"errors"
	"fmt"
	"strings"
)

// Sentinel errors; every LoadError wraps exactly one of them.
var (
	ErrSyntax         = errors.New("toml syntax")
	ErrUnknownKey     = errors.New("unknown key")
	ErrUnknownCheck   = errors.New("unknown check")
	ErrUnknownField   = errors.New("unknown field")
	ErrUnknownCatalog = errors.New("unknown catalog")
	ErrParamType      = errors.New("wrong parameter type")
	ErrMissingParam   = errors.New("missing parameter")
	ErrBadValue       = errors.New("bad value")
	ErrDuplicateID    = errors.New("duplicate rule id")
	ErrBadID          = errors.New("bad rule id")
	ErrSeverity       = errors.New("bad severity")
	ErrCheckOrExpr    = errors.New("need exactly one of check and expr")
	ErrExpr           = errors.New("bad expression")
	ErrSchema         = errors.New("bad schema")
)

// LoadError is one problem found while loading a rule file.
type LoadError struct {
	File   string
	Line   int    // 1-based; the offending key's line, else the rule's [[rule]] header
	Col    int    // 1-based
	RuleID string // "" when the problem is outside any rule or the rule has no id
	RuleNo int    // 1-based position of the rule in the file; 0 outside any rule
	Kind   error  // one of the Err* sentinels
	Msg    string
}

func (e *LoadError) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s:%d:%d: ", e.File, e.Line, e.Col)
	switch {
	case e.RuleID != "":
		fmt.Fprintf(&b, "rule %q: ", e.RuleID)
	case e.RuleNo > 0:
		fmt.Fprintf(&b, "rule #%d (no id): ", e.RuleNo)
	}
	b.WriteString(e.Msg)
	return b.String()
}

func (e *LoadError) Unwrap() error { return e.Kind }

// LoadErrors is every problem found in one file, in line order.
type LoadErrors []*LoadError

func (es LoadErrors) Error() string {
	s := make([]string, len(es))
	for i, e := range es {
		s[i] = e.Error()
	}
	return strings.Join(s, "\n")
}

// Unwrap lets errors.Is find any of the sentinels.
func (es LoadErrors) Unwrap() []error {
	out := make([]error, len(es))
	for i, e := range es {
		out[i] = e
	}
	return out
}
