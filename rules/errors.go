package rules

import "errors"

// Sentinel errors; every load error (a *position.Error whose Name is the
// rule id and whose What reads `rule "id"` or `rule #N (no id)`) wraps
// exactly one of them.
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
