package rules

import (
	"errors"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

func TestVoids(t *testing.T) {
	const base = `name = "v"
version = "1"
[[rule]]
id = "snr"
severity = "flag"
check = "spectrum_snr"
limit = 10
`
	rs, err := Parse("v.toml", []byte(base+`voids = ["rv", "rv_err", "rv"]`+"\n"), Schema{})
	if err != nil {
		t.Fatal(err)
	}
	got := rs.Rules[0].Voids
	if len(got) != 2 || got[0] != catalog.RV || got[1] != catalog.RVErr {
		t.Fatalf("voids = %v, want [rv rv_err] without the repeat", got)
	}
	plain, err := Parse("v.toml", []byte(base), Schema{})
	if err != nil {
		t.Fatal(err)
	}
	if plain.Fingerprint == rs.Fingerprint {
		t.Error("adding voids left the fingerprint unchanged")
	}
	swapped, err := Parse("v.toml", []byte(base+`voids = ["rv_err", "rv"]`+"\n"), Schema{})
	if err != nil {
		t.Fatal(err)
	}
	if swapped.Fingerprint != rs.Fingerprint {
		t.Error("the order of voids changed the fingerprint")
	}
	_, err = Parse("v.toml", []byte(base+`voids = ["rv", "velocity"]`+"\n"), Schema{})
	var le position.Errors
	if !errors.Is(err, ErrUnknownField) || !errors.As(err, &le) || le[0].Line != 8 {
		t.Fatalf("unknown field in voids: got %v, want ErrUnknownField on line 8", err)
	}
	_, err = Parse("v.toml", []byte(base+`voids = "rv"`+"\n"), Schema{})
	if !errors.Is(err, ErrParamType) {
		t.Fatalf("voids as a string: got %v, want ErrParamType", err)
	}
}
