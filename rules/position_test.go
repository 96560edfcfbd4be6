package rules

import (
	"errors"
	"testing"

	"starvet/internal/position"
)

// Positions must survive multi-line strings, multi-line arrays, comments
// holding brackets or "=", and keys written with quotes.
func TestPositionsAfterMultilineValues(t *testing.T) {
	text := `name = "p"
version = "1"

[[rule]]   # a comment with [[rule]] in it
id = "multi"
severity = "flag"
expr = """
pm_total > 1 &&
[[rule]]
"""
when = 'mag'

[[rule]]
id = "arr"
severity = "flag"
check = "required_fields"
fields = [
  "ra",  # id = "not a key"
  "dec",
]
"limit" = 3
`
	_, err := Parse("p.toml", []byte(text), Schema{})
	var les position.Errors
	if !errors.As(err, &les) {
		t.Fatalf("got %v", err)
	}
	want := []struct {
		line int
		id   string
		kind error
	}{
		{7, "multi", ErrExpr},  // the expression's key line
		{11, "multi", ErrExpr}, // when is not boolean
		{21, "arr", ErrUnknownKey},
	}
	if len(les) != len(want) {
		t.Fatalf("got %d errors:\n%v", len(les), err)
	}
	for i, w := range want {
		if les[i].Line != w.line || les[i].Name != w.id || !errors.Is(les[i], w.kind) {
			t.Errorf("error %d: %v; want line %d rule %q", i, les[i], w.line, w.id)
		}
	}
}

func TestInlineRuleArray(t *testing.T) {
	text := "name = \"p\"\nversion = \"1\"\nrule = [\n  {id = \"a\", severity = \"flag\", check = \"duplicate\"},\n  {id = \"b\", severity = \"bad\", check = \"duplicate\"},\n]\n"
	_, err := Parse("i.toml", []byte(text), Schema{})
	var les position.Errors
	if !errors.As(err, &les) || len(les) != 1 {
		t.Fatalf("got %v", err)
	}
	// No [[rule]] headers: the error falls back to the line of "rule =".
	if les[0].Line != 3 || les[0].Name != "b" || !errors.Is(les[0], ErrSeverity) {
		t.Errorf("got %v", les[0])
	}
}
