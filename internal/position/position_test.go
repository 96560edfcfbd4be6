package position

import (
	"errors"
	"testing"
)

var errBad = errors.New("bad value")

func TestMessages(t *testing.T) {
	for _, c := range []struct {
		e    Error
		want string
	}{
		{Error{File: "a.csv", Line: 4, Col: 3, What: `column "ra" value "x"`, Msg: "not a number"}, `a.csv:4:3: column "ra" value "x": not a number`},
		{Error{File: "c.toml", Line: 12, What: "kinematics.samples", Msg: "must be > 0"}, "c.toml:12: kinematics.samples: must be > 0"},
		{Error{File: "t.fits", Row: 17, What: `column "plx"`, Msg: "null"}, `t.fits: row 17: column "plx": null`},
		{Error{File: "r.toml", Msg: "cannot read"}, "r.toml: cannot read"},
	} {
		if got := c.e.Error(); got != c.want {
			t.Errorf("got %q, want %q", got, c.want)
		}
	}
}

func TestUnwrap(t *testing.T) {
	es := Errors{{File: "f", Line: 1, Msg: "x", Err: errBad}}
	var err error = es
	if !errors.Is(err, errBad) {
		t.Error("errors.Is does not reach the sentinel")
	}
	var e *Error
	if !errors.As(err, &e) || e.Line != 1 {
		t.Errorf("errors.As: %+v", e)
	}
}
