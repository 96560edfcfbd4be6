package campaign

import "errors"

// Sentinel errors, each wrapped by the *position.Error of a problem (whose
// What and Name are the dotted key: "catalog[2].role", "kinematics.samples").
var (
	ErrRead         = errors.New("cannot read campaign file")
	ErrSyntax       = errors.New("not valid TOML or a value of the wrong type")
	ErrUnknownKey   = errors.New("unknown key")
	ErrUnknownField = errors.New("unknown canonical field")
	ErrBadUnit      = errors.New("unknown unit")
	ErrBadValue     = errors.New("invalid value")
	ErrMissing      = errors.New("missing required key")
)
