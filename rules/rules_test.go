package rules

import (
	"errors"
	"math"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

func TestDefaultLoads(t *testing.T) {
	rs, err := Default(Schema{Catalogs: []string{"spec-a", "phot-b"}})
	if err != nil {
		t.Fatal(err)
	}
	wantIDs := []string{"duplicate-source", "excess-noise", "fit-residual", "fit-visits", "match-quality",
		"parallax-significance", "required-fields", "rv-precision", "spectrum-snr"}
	if len(rs.Rules) != len(wantIDs) {
		t.Fatalf("got %d rules, want %d", len(rs.Rules), len(wantIDs))
	}
	for i, r := range rs.Rules {
		if r.ID != wantIDs[i] {
			t.Errorf("rule %d: id %q, want %q (sorted by id)", i, r.ID, wantIDs[i])
		}
		if r.Source == "" {
			t.Errorf("rule %q has no source", r.ID)
		}
		if len(r.Fingerprint) != 64 {
			t.Errorf("rule %q fingerprint %q", r.ID, r.Fingerprint)
		}
	}
	if rs.Name != "default" || rs.Version == "" || len(rs.Fingerprint) != 64 {
		t.Errorf("set header: name %q version %q fingerprint %q", rs.Name, rs.Version, rs.Fingerprint)
	}
	byID := map[string]*Rule{}
	for _, r := range rs.Rules {
		byID[r.ID] = r
	}
	// Thresholds required by the brief; sources are in default.toml.
	checks := []struct {
		id    string
		limit float64
		dir   Direction
	}{
		{"fit-residual", 1.4, Max},        // Lindegren et al. 2018, technical note LL-124
		{"parallax-significance", 5, Min}, // common practice
		{"excess-noise", 2, Max},          // from memory
		{"fit-visits", 8, Min},            // from memory
		{"rv-precision", 20, Max},         // project choice
		{"spectrum-snr", 10, Min},         // common practice
	}
	for _, c := range checks {
		r := byID[c.id]
		if r == nil || r.Limit != c.limit || r.Dir != c.dir {
			t.Errorf("%s: got %+v, want limit %v dir %v", c.id, r, c.limit, c.dir)
		}
	}
	if r := byID["parallax-significance"]; r.When == nil || r.When.Source != "is_missing(distance)" {
		t.Errorf("parallax-significance precondition: %+v", r.When)
	}
	m := byID["match-quality"]
	if m.Catalog != AllCatalogs || len(m.CatalogIdx) != 2 || m.MinProb != 0.9 || m.MaxSepArcsec != 1 || m.AllowAmbiguous {
		t.Errorf("match-quality: %+v", m)
	}
	req := byID["required-fields"]
	want := []catalog.Field{catalog.RA, catalog.Dec, catalog.PMRA, catalog.PMDec}
	if len(req.Fields) != len(want) {
		t.Fatalf("required fields %v", req.Fields)
	}
	for i := range want {
		if req.Fields[i] != want[i] {
			t.Errorf("required field %d: %v, want %v", i, req.Fields[i], want[i])
		}
	}
}

func TestDefaultWithoutCatalogs(t *testing.T) {
	rs, err := Default(Schema{})
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range rs.Rules {
		if r.ID == "match-quality" && len(r.CatalogIdx) != 0 {
			t.Errorf("match-quality applies to %v with no catalogs", r.CatalogIdx)
		}
	}
}

const head = "name = \"t\"\nversion = \"1\"\n"

func TestLoadErrors(t *testing.T) {
	cases := []struct {
		name   string
		text   string
		line   int
		col    int
		ruleID string
		kind   error
		inMsg  string
	}{
		{"unknown check", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"nope\"\n", 6, 1, "a", ErrUnknownCheck, `unknown check "nope"`},
		{"unknown field", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"at_most\"\nfield = \"colour\"\nlimit = 1\n", 7, 1, "a", ErrUnknownField, `"colour"`},
		{"unknown field in list", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"required_fields\"\nfields = [\"ra\", \"declination\"]\n", 7, 1, "a", ErrUnknownField, `"declination"`},
		{"wrong parameter type", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"fit_residual\"\n  limit = \"1.4\"\n", 7, 3, "a", ErrParamType, "limit must be a number"},
		{"wrong bool type", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"match\"\ncatalog = \"*\"\nallow_ambiguous = 1\n", 8, 1, "a", ErrParamType, "allow_ambiguous"},
		{"missing parameter", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"fit_residual\"\n", 3, 1, "a", ErrMissingParam, "needs limit"},
		{"missing severity", head + "\n[[rule]]\nid = \"a\"\ncheck = \"duplicate\"\n", 4, 1, "a", ErrMissingParam, "missing severity"},
		{"unknown key in rule", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"duplicate\"\nthreshold = 3\n", 7, 1, "a", ErrUnknownKey, `"threshold"`},
		{"unknown top-level key", head + "author = \"me\"\n", 3, 1, "", ErrUnknownKey, `"author"`},
		{"unknown table", head + "[extra]\nx = 1\n", 3, 1, "", ErrUnknownKey, `"extra"`},
		{"duplicate id", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"duplicate\"\n\n[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"duplicate\"\n", 9, 1, "a", ErrDuplicateID, "line 3"},
		{"bad severity", head + "[[rule]]\nid = \"a\"\nseverity = \"fatal\"\ncheck = \"duplicate\"\n", 5, 1, "a", ErrSeverity, `"fatal"`},
		{"empty severity", head + "[[rule]]\nid = \"a\"\nseverity = \"\"\ncheck = \"duplicate\"\n", 5, 1, "a", ErrSeverity, `""`},
		{"empty check", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"\"\n", 6, 1, "a", ErrUnknownCheck, "empty"},
		{"empty expr", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\nexpr = \"\"\n", 6, 1, "a", ErrExpr, "empty"},
		{"bad id", head + "[[rule]]\nid = \"Fit_Residual\"\nseverity = \"flag\"\ncheck = \"duplicate\"\n", 4, 1, "Fit_Residual", ErrBadID, "lower-case"},
		{"expr does not compile", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\nexpr = \"pm_total > \"\n", 6, 1, "a", ErrExpr, "expr:"},
		{"expr unknown name", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\nexpr = \"pmtotal > 3\"\n", 6, 1, "a", ErrExpr, "pmtotal"},
		{"retired check name", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"visibility_periods\"\nlimit = 8\n", 6, 1, "a", ErrUnknownCheck, "visibility_periods was renamed fit_visits"},
		{"retired field name", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"at_least\"\nfield = \"visibility_periods\"\nlimit = 8\n", 7, 1, "a", ErrUnknownField, "visibility_periods was renamed fit_visits"},
		{"retired expr name", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\nexpr = \"pm_total > 3 && parallax_over_error > 5\"\n", 6, 1, "a", ErrExpr, "parallax_over_error was renamed parallax_significance (at column 17 of the expression)"},
		{"expr not boolean", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\nexpr = \"pm_total + 1\"\n", 6, 1, "a", ErrExpr, "bool"},
		{"when not boolean", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"duplicate\"\nwhen = \"mag\"\n", 7, 1, "a", ErrExpr, "when:"},
		{"expr on bool var with float op", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\nexpr = \"spec_matched > 1\"\n", 6, 1, "a", ErrExpr, "expr:"},
		{"both check and expr", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"duplicate\"\nexpr = \"true\"\n", 7, 1, "a", ErrCheckOrExpr, "both"},
		{"neither check nor expr", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\n", 3, 1, "a", ErrCheckOrExpr, "neither"},
		{"unknown catalog", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"match\"\ncatalog = \"other\"\nmin_prob = 0.5\n", 7, 1, "a", ErrUnknownCatalog, `"other"`},
		{"probability out of range", head + "[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"match\"\ncatalog = \"spec\"\nmin_prob = 1.5\n", 8, 1, "a", ErrBadValue, "min_prob"},
		{"missing name", "version = \"1\"\n", 1, 1, "", ErrMissingParam, "name"},
		{"rule not a table array", head + "rule = 3\n", 3, 1, "", ErrParamType, "[[rule]]"},
		{"toml syntax", head + "[[rule]]\nid = \"a\nseverity = \"flag\"\n", 4, 0, "", ErrSyntax, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse("bad.toml", []byte(c.text), Schema{Catalogs: []string{"spec"}})
			if err == nil {
				t.Fatal("no error")
			}
			var les position.Errors
			if !errors.As(err, &les) || len(les) == 0 {
				t.Fatalf("error %T %v is not position.Errors", err, err)
			}
			if !errors.Is(err, c.kind) {
				t.Errorf("errors.Is(%v) false for %v", c.kind, err)
			}
			var hit *position.Error
			for _, e := range les {
				if errors.Is(e, c.kind) {
					hit = e
					break
				}
			}
			if hit == nil {
				t.Fatalf("no error of kind %v in %v", c.kind, err)
			}
			if hit.File != "bad.toml" || hit.Line != c.line || hit.Name != c.ruleID || (c.col > 0 && hit.Col != c.col) {
				t.Errorf("got %s:%d:%d rule %q, want line %d col %d rule %q (%v)", hit.File, hit.Line, hit.Col, hit.Name, c.line, c.col, c.ruleID, hit)
			}
			if !strings.Contains(hit.Msg, c.inMsg) {
				t.Errorf("message %q lacks %q", hit.Msg, c.inMsg)
			}
			wantPrefix := "bad.toml:"
			if !strings.HasPrefix(hit.Error(), wantPrefix) {
				t.Errorf("error text %q", hit.Error())
			}
			if c.ruleID != "" && !strings.Contains(hit.Error(), `rule "`+c.ruleID+`": `) {
				t.Errorf("error text %q lacks the rule id", hit.Error())
			}
		})
	}
}

func TestLoadErrorsCollectsAll(t *testing.T) {
	text := head + `
[[rule]]
id = "one"
severity = "meh"
check = "duplicate"

[[rule]]
id = "two"
severity = "flag"
check = "fit_residual"
limit = true

[[rule]]
id = "three"
severity = "flag"
expr = "mag <"
`
	_, err := Parse("many.toml", []byte(text), Schema{})
	var les position.Errors
	if !errors.As(err, &les) {
		t.Fatalf("got %v", err)
	}
	want := []struct {
		line int
		id   string
		kind error
	}{{6, "one", ErrSeverity}, {13, "two", ErrParamType}, {18, "three", ErrExpr}}
	if len(les) != len(want) {
		t.Fatalf("got %d errors, want %d:\n%v", len(les), len(want), err)
	}
	for i, w := range want {
		if les[i].Line != w.line || les[i].Name != w.id || !errors.Is(les[i], w.kind) {
			t.Errorf("error %d: %v; want line %d rule %q kind %v", i, les[i], w.line, w.id, w.kind)
		}
	}
	if n := strings.Count(err.Error(), "\n"); n != 2 {
		t.Errorf("joined text has %d newlines, want 2:\n%s", n, err)
	}
}

func TestRuleWithoutID(t *testing.T) {
	_, err := Parse("n.toml", []byte(head+"[[rule]]\nid = \"a\"\nseverity = \"flag\"\ncheck = \"duplicate\"\n[[rule]]\nseverity = \"flag\"\ncheck = \"duplicate\"\n"), Schema{})
	want := `n.toml:7:1: rule #2 (no id): missing id`
	if err == nil || err.Error() != want {
		t.Errorf("got %v, want %s", err, want)
	}
}

func TestExprColumn(t *testing.T) {
	_, err := Parse("c.toml", []byte(head+"[[rule]]\nid = \"a\"\nseverity = \"flag\"\nexpr = \"mag < 3 && nosuch\"\n"), Schema{})
	if err == nil || !strings.Contains(err.Error(), "column 12 of the expression") {
		t.Errorf("got %v, want the column of nosuch (12, counted by hand)", err)
	}
}

func TestSchemaErrors(t *testing.T) {
	for _, cats := range [][]string{{"a", "a"}, {""}, {"*"}} {
		t.Run(strings.Join(cats, ","), func(t *testing.T) {
			if _, err := Default(Schema{Catalogs: cats}); !errors.Is(err, ErrSchema) {
				t.Errorf("got %v, want ErrSchema", err)
			}
		})
	}
}

func TestCatalogsAndVars(t *testing.T) {
	text := head + `
[[rule]]
id = "spec-ok"
severity = "flag"
check = "match"
catalog = "spec-x"
max_sep_arcsec = 2

[[rule]]
id = "phot-close"
severity = "flag"
expr = "!phot_y_matched || (phot_y_sep_arcsec < 1 && pm_total > 0 && dup_count == 0)"
`
	t.Run("strict rejects unknown", func(t *testing.T) {
		_, err := Parse("x.toml", []byte(text), Schema{})
		if !errors.Is(err, ErrUnknownCatalog) || !errors.Is(err, ErrExpr) {
			t.Errorf("got %v", err)
		}
	})
	t.Run("declared", func(t *testing.T) {
		rs, err := Parse("x.toml", []byte(text), Schema{Catalogs: []string{"phot_y", "spec-x"}})
		if err != nil {
			t.Fatal(err)
		}
		r := rs.Rules[1]
		if r.ID != "spec-ok" || len(r.CatalogIdx) != 1 || r.CatalogIdx[0] != 1 || !math.IsNaN(r.MinProb) || r.MaxSepArcsec != 2 {
			t.Errorf("spec-ok: %+v", r)
		}
		vars := rs.Rules[0].Expr.Vars()
		var names []string
		for _, v := range vars {
			names = append(names, v.Name)
		}
		if got := strings.Join(names, ","); got != "dup_count,phot_y_matched,phot_y_sep_arcsec,pm_total" {
			t.Errorf("vars %s", got)
		}
		if vars[1].Kind != VarMatched || vars[1].Catalog != 0 || vars[2].Kind != VarSepArcsec {
			t.Errorf("var kinds %+v", vars)
		}
		if rs.Rules[0].Expr.UsesIsMissing() {
			t.Error("UsesIsMissing true")
		}
	})
	t.Run("permissive finds names", func(t *testing.T) {
		rs, err := Parse("x.toml", []byte(text), Schema{AnyCatalog: true})
		if err != nil {
			t.Fatal(err)
		}
		if got := strings.Join(rs.Catalogs, ","); got != "spec-x,phot_y" {
			t.Errorf("catalogs %s", got)
		}
	})
	t.Run("dash becomes underscore in expressions", func(t *testing.T) {
		_, err := Parse("x.toml", []byte(head+"[[rule]]\nid = \"a\"\nseverity = \"flag\"\nexpr = \"spec_x_matched\"\n"), Schema{Catalogs: []string{"spec-x"}})
		if err != nil {
			t.Error(err)
		}
	})
}

func TestMissingTest(t *testing.T) {
	env := newExprEnv(nil)
	cases := []struct {
		src     string
		ok, neg bool
		field   catalog.Field
	}{
		{"is_missing(distance)", true, false, catalog.Distance},
		{"!is_missing( rv )", true, true, catalog.RV},
		{"not is_missing(rv)", true, true, catalog.RV},
		{"is_missing(pm_total)", false, false, 0},
		{"is_missing(rv) && true", false, false, 0},
	}
	for _, c := range cases {
		t.Run(c.src, func(t *testing.T) {
			e, _, err := env.compile(c.src)
			if err != nil {
				t.Fatal(err)
			}
			f, neg, ok := e.MissingTest()
			if ok != c.ok || (ok && (neg != c.neg || f != c.field)) {
				t.Errorf("got %v %v %v", f, neg, ok)
			}
			if !e.UsesIsMissing() {
				t.Error("UsesIsMissing false")
			}
		})
	}
}
