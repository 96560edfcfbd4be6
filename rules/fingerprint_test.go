package rules

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const fpBase = `name = "fp"
version = "1"

[[rule]]
id = "fit"
severity = "reject"
check = "fit_residual"
limit = 1.4
source = "Lindegren et al. 2018, technical note LL-124"

[[rule]]
id = "plx"
severity = "reject"
check = "parallax_significance"
limit = 5
when = "is_missing(distance)"

[[rule]]
id = "fast"
severity = "flag"
expr = "pm_total > 50 && mag < 12"

[[rule]]
id = "need"
severity = "reject"
check = "required_fields"
fields = ["ra", "dec"]
`

// Same rules: comments, spacing, key order, rule order, number spelling,
// expression spacing, field-list order, description and version differ.
const fpReformatted = `# a comment
version = "2"   # labels are not fingerprinted
name    = "renamed"

[[rule]]
  fields   = [ "dec", "ra" ]
  check    = "required_fields"
  severity = "reject"
  id       = "need"

[[rule]]
id="fast"
expr="pm_total>50&&mag<12"
severity="flag"
description = "added words"

[[rule]]
id = "plx"
when = "is_missing( distance )"
limit = 5.0
check = "parallax_significance"
severity = "reject"

[[rule]]
id = "fit"   # trailing comment
limit = 1.40
check = "fit_residual"
severity = "reject"
source = "reworded source"
`

func mustParse(t *testing.T, text string) *RuleSet {
	t.Helper()
	rs, err := Parse("fp.toml", []byte(text), Schema{})
	if err != nil {
		t.Fatal(err)
	}
	return rs
}

func TestFingerprintStable(t *testing.T) {
	a, b := mustParse(t, fpBase), mustParse(t, fpReformatted)
	if a.Fingerprint != b.Fingerprint {
		t.Errorf("set fingerprints differ: %s vs %s", a.Fingerprint, b.Fingerprint)
	}
	for i := range a.Rules {
		if a.Rules[i].ID != b.Rules[i].ID || a.Rules[i].Fingerprint != b.Rules[i].Fingerprint {
			t.Errorf("rule %s: %s vs %s", a.Rules[i].ID, a.Rules[i].Fingerprint, b.Rules[i].Fingerprint)
		}
	}
	if a2 := mustParse(t, fpBase); a2.Fingerprint != a.Fingerprint {
		t.Error("fingerprint differs between two loads of one text")
	}
}

func TestFingerprintChanges(t *testing.T) {
	base := mustParse(t, fpBase)
	cases := []struct {
		name, old, new, rule string
	}{
		{"threshold", "limit = 1.4\n", "limit = 1.5\n", "fit"},
		{"tiny threshold change", "limit = 1.4\n", "limit = 1.4000000001\n", "fit"},
		{"severity", "severity = \"flag\"\nexpr", "severity = \"reject\"\nexpr", "fast"},
		{"expression", "pm_total > 50", "pm_total >= 50", "fast"},
		{"precondition", `when = "is_missing(distance)"`, `when = "!is_missing(distance)"`, "plx"},
		{"precondition removed", "when = \"is_missing(distance)\"\n", "", "plx"},
		{"id", `id = "fit"`, `id = "fit2"`, "fit2"},
		{"required field added", `fields = ["ra", "dec"]`, `fields = ["ra", "dec", "pm_ra"]`, "need"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(fpBase, c.old) {
				t.Fatalf("base lacks %q", c.old)
			}
			rs := mustParse(t, strings.Replace(fpBase, c.old, c.new, 1))
			if rs.Fingerprint == base.Fingerprint {
				t.Error("set fingerprint unchanged")
			}
			changed := 0
			for _, r := range rs.Rules {
				var old *Rule
				for _, o := range base.Rules {
					if o.ID == r.ID {
						old = o
					}
				}
				if old == nil || old.Fingerprint != r.Fingerprint {
					changed++
					if r.ID != c.rule {
						t.Errorf("rule %s changed, want only %s", r.ID, c.rule)
					}
				}
			}
			if changed != 1 {
				t.Errorf("%d rules changed, want 1", changed)
			}
		})
	}
}

func TestFingerprintDefaultFileOnDisk(t *testing.T) {
	// The embedded default and the file in the tree are the same bytes.
	disk, err := os.ReadFile(filepath.Join(".", "default.toml"))
	if err != nil {
		t.Fatal(err)
	}
	a, err := Parse("default.toml", disk, Schema{})
	if err != nil {
		t.Fatal(err)
	}
	b, err := Default(Schema{})
	if err != nil {
		t.Fatal(err)
	}
	if a.Fingerprint != b.Fingerprint {
		t.Error("embedded default differs from rules/default.toml")
	}
}
