package rules

import (
	"errors"
	"strings"
	"testing"

	"starvet/internal/position"
)

// FuzzLoad feeds arbitrary text to the loader. It must never panic; an
// accepted file must have valid, unique, sorted ids and stable
// fingerprints; a rejected one must give positioned position.Errors.
func FuzzLoad(f *testing.F) {
	f.Add([]byte(fpBase))
	f.Add([]byte(fpReformatted))
	f.Add(defaultTOML)
	f.Add([]byte(head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"match\"\ncatalog = \"spec\"\nmin_prob = 0.9\n"))
	f.Add([]byte(head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\nexpr = '''\nspec_matched &&\n  spec_match_prob > 0.5'''\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		schema := Schema{Catalogs: []string{"spec"}}
		rs, err := Parse("fuzz.toml", data, schema)
		if err != nil {
			var les position.Errors
			if !errors.As(err, &les) || len(les) == 0 {
				t.Fatalf("error is not position.Errors: %v", err)
			}
			nLines := strings.Count(string(data), "\n") + 1
			for _, e := range les {
				if e.Line < 1 || e.Line > nLines+1 || e.Col < 1 || e.Err == nil || e.File != "fuzz.toml" {
					t.Fatalf("bad position or kind in %+v (file has %d lines)", e, nLines)
				}
			}
			return
		}
		if rs.Fingerprint == "" {
			t.Fatal("no fingerprint")
		}
		for i, r := range rs.Rules {
			if !idRe.MatchString(r.ID) {
				t.Fatalf("accepted bad id %q", r.ID)
			}
			if i > 0 && rs.Rules[i-1].ID >= r.ID {
				t.Fatalf("ids not sorted and unique: %q then %q", rs.Rules[i-1].ID, r.ID)
			}
			if r.Severity != Reject && r.Severity != Flag {
				t.Fatalf("accepted severity %q", r.Severity)
			}
			if (r.Check == "") == (r.Expr == nil) {
				t.Fatalf("rule %q has check %q and expr %v", r.ID, r.Check, r.Expr)
			}
		}
		again, err := Parse("fuzz.toml", data, schema)
		if err != nil || again.Fingerprint != rs.Fingerprint {
			t.Fatalf("second load differs: %v", err)
		}
	})
}
