package quality

import (
	"context"
	"errors"
	"math"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/numfmt"
	"starvet/rules"
)

var nan = math.NaN()

func parse(t *testing.T, text string, cats ...string) *rules.RuleSet {
	t.Helper()
	rs, err := rules.Parse("test.toml", []byte("name = \"t\"\nversion = \"1\"\n"+text), rules.Schema{Catalogs: cats})
	if err != nil {
		t.Fatal(err)
	}
	return rs
}

// blank returns a star with every value missing and no counterparts.
func blank() Star {
	var s Star
	for f := range s.Values {
		s.Values[f] = nan
	}
	return s
}

func with(f catalog.Field, v float64) Star {
	s := blank()
	s.Values[f] = v
	return s
}

func one(t *testing.T, rs *rules.RuleSet, ctx Context, s Star) Outcome {
	t.Helper()
	var a Assessment
	NewEvaluator(rs, ctx).Assess(&s, &a)
	if len(a.Outcomes) != 1 {
		t.Fatalf("%d outcomes", len(a.Outcomes))
	}
	return a.Outcomes[0]
}

func below(x float64) float64 { return math.Nextafter(x, math.Inf(-1)) }
func above(x float64) float64 { return math.Nextafter(x, math.Inf(1)) }

// TestThresholds puts every single-value built-in exactly at, just inside
// and just outside its limit (one float64 step), and at missing/NaN.
func TestThresholds(t *testing.T) {
	type tc struct {
		check string
		field catalog.Field
		limit float64
		max   bool // pass when <= limit
	}
	checks := []tc{
		{`check = "fit_residual"`, catalog.FitResidual, 1.4, true},
		{`check = "excess_noise_significance"`, catalog.ExcessNoiseSig, 2, true},
		{`check = "fit_visits"`, catalog.FitVisits, 8, false},
		{`check = "rv_precision"`, catalog.RVErr, 20, true},
		{`check = "spectrum_snr"`, catalog.SNR, 10, false},
		{"check = \"at_least\"\nfield = \"mag\"", catalog.Mag, 11.5, false},
		{"check = \"at_most\"\nfield = \"color\"", catalog.Color, -0.25, true},
	}
	for _, c := range checks {
		rs := parse(t, "[[rule]]\nid = \"r\"\nseverity = \"flag\"\n"+c.check+"\nlimit = "+numfmt.Exact(c.limit)+"\n")
		inside, outside := below(c.limit), above(c.limit)
		if !c.max {
			inside, outside = outside, inside
		}
		name := catalog.Fields[c.field].Name
		cases := []struct {
			label  string
			v      float64
			result string
		}{
			{"at", c.limit, ResultPass},
			{"inside", inside, ResultPass},
			{"outside", outside, ResultFail},
			{"missing", nan, ResultSkipped},
		}
		for _, k := range cases {
			t.Run(name+"/"+k.label, func(t *testing.T) {
				o := one(t, rs, Context{}, with(c.field, k.v))
				if o.Result != k.result {
					t.Fatalf("value %v: %s (%s), want %s", k.v, o.Result, o.Message, k.result)
				}
				if k.result == ResultSkipped {
					if o.Message != "skipped: "+name+" missing" || !math.IsNaN(o.Value) {
						t.Errorf("skip message %q value %v", o.Message, o.Value)
					}
					return
				}
				if o.Value != k.v {
					t.Errorf("Value %v, want %v", o.Value, k.v)
				}
				if !strings.HasPrefix(o.Message, name+" ") {
					t.Errorf("message %q", o.Message)
				}
			})
		}
	}
}

func TestParallaxSignificance(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"p\"\nseverity = \"reject\"\ncheck = \"parallax_significance\"\nlimit = 5\n")
	// Binary-exact numbers: (0.5625 - (-0.0625)) / 0.125 = 5 exactly.
	zp := Context{ParallaxZeroPointMas: -0.0625}
	star := func(p, pe float64) Star {
		s := blank()
		s.Values[catalog.Parallax], s.Values[catalog.ParallaxErr] = p, pe
		return s
	}
	cases := []struct {
		name   string
		ctx    Context
		p, pe  float64
		result string
		value  float64
		msg    string
	}{
		{"at", zp, 0.5625, 0.125, ResultPass, 5, "parallax_significance >= 5"},
		{"inside", zp, above(0.5625), 0.125, ResultPass, nan, ""},
		{"outside", zp, below(0.5625), 0.125, ResultFail, nan, ""},
		{"zero point subtracted", Context{}, 0.5625, 0.125, ResultFail, 4.5, "parallax_significance 4.5 < 5"},
		{"parallax missing", zp, nan, 0.125, ResultSkipped, nan, "skipped: parallax missing"},
		{"error missing", zp, 0.5, nan, ResultSkipped, nan, "skipped: parallax_err missing"},
		{"error zero", zp, 0.5, 0, ResultSkipped, nan, "skipped: parallax_err is not positive"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			o := one(t, rs, c.ctx, star(c.p, c.pe))
			if o.Result != c.result {
				t.Fatalf("%s (%s), want %s", o.Result, o.Message, c.result)
			}
			if !math.IsNaN(c.value) && o.Value != c.value {
				t.Errorf("value %v, want %v", o.Value, c.value)
			}
			if c.msg != "" && o.Message != c.msg {
				t.Errorf("message %q, want %q", o.Message, c.msg)
			}
		})
	}
}

func TestDuplicate(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"d\"\nseverity = \"reject\"\ncheck = \"duplicate\"\n")
	cases := []struct {
		name   string
		flag   float64
		dups   int
		result string
		msg    string
	}{
		{"clean", 0, 0, ResultPass, "duplicate_flag 0, dup_count 0"},
		{"catalog flag", 1, 0, ResultFail, "duplicate_flag 1, dup_count 0"},
		{"self-match", 0, 2, ResultFail, "duplicate_flag 0, dup_count 2"},
		{"flag missing, self-match clean", nan, 0, ResultPass, "duplicate_flag missing, dup_count 0"},
		{"flag missing, self-match found one", nan, 1, ResultFail, "duplicate_flag missing, dup_count 1"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := with(catalog.DuplicateFlag, c.flag)
			s.DupCount = c.dups
			o := one(t, rs, Context{}, s)
			if o.Result != c.result || o.Message != c.msg || o.Value != float64(c.dups) {
				t.Errorf("got %s %q %v, want %s %q", o.Result, o.Message, o.Value, c.result, c.msg)
			}
		})
	}
}

func TestMatch(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"m\"\nseverity = \"reject\"\ncheck = \"match\"\ncatalog = \"spec\"\nmin_prob = 0.9\nmax_sep_arcsec = 1.0\n", "phot", "spec")
	good := MatchInfo{Matched: true, SepArcsec: 0.5, Prob: 0.95, Candidates: 1}
	mod := func(f func(m *MatchInfo)) MatchInfo { m := good; f(&m); return m }
	cases := []struct {
		name   string
		m      MatchInfo
		result string
		inMsg  string
	}{
		{"good", good, ResultPass, "every counterpart tested: prob >= 0.9, sep <= 1 arcsec, unambiguous"},
		{"prob at", mod(func(m *MatchInfo) { m.Prob = 0.9 }), ResultPass, ""},
		{"prob inside", mod(func(m *MatchInfo) { m.Prob = above(0.9) }), ResultPass, ""},
		{"prob outside", mod(func(m *MatchInfo) { m.Prob = below(0.9) }), ResultFail, "< 0.9"},
		{"sep at", mod(func(m *MatchInfo) { m.SepArcsec = 1 }), ResultPass, ""},
		{"sep inside", mod(func(m *MatchInfo) { m.SepArcsec = below(1) }), ResultPass, ""},
		{"sep outside", mod(func(m *MatchInfo) { m.SepArcsec = above(1) }), ResultFail, "1.0000000000000002 > 1"},
		{"ambiguous", mod(func(m *MatchInfo) { m.Ambiguous, m.Candidates = true, 3 }), ResultFail, "ambiguous (3 candidates)"},
		{"prob NaN", mod(func(m *MatchInfo) { m.Prob = nan }), ResultSkipped, "prob missing"},
		{"NaN prob but too far", mod(func(m *MatchInfo) { m.Prob, m.SepArcsec = nan, 3 }), ResultFail, "sep 3 > 1"},
		{"no counterpart", MatchInfo{}, ResultSkipped, "skipped: no counterpart"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := blank()
			// phot is not tested by this rule, so its bad match must not matter.
			s.Matches = []MatchInfo{{Matched: true, Prob: 0.1, SepArcsec: 9}, c.m}
			o := one(t, rs, Context{}, s)
			if o.Result != c.result || !strings.Contains(o.Message, c.inMsg) {
				t.Errorf("got %s %q, want %s containing %q", o.Result, o.Message, c.result, c.inMsg)
			}
			if c.m.Matched && !math.IsNaN(c.m.Prob) && o.Value != c.m.Prob {
				t.Errorf("Value %v, want %v", o.Value, c.m.Prob)
			}
		})
	}
	t.Run("short Matches slice is unmatched", func(t *testing.T) {
		if o := one(t, rs, Context{}, blank()); o.Result != ResultSkipped {
			t.Errorf("got %s", o.Result)
		}
	})
}

func TestMatchAllCatalogs(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"m\"\nseverity = \"reject\"\ncheck = \"match\"\ncatalog = \"*\"\nmin_prob = 0.9\nallow_ambiguous = true\n", "spec-a", "spec-b", "spec-c")
	ok := MatchInfo{Matched: true, Prob: 0.99, Ambiguous: true, Candidates: 2}
	bad := MatchInfo{Matched: true, Prob: 0.5}
	cases := []struct {
		name    string
		matches []MatchInfo
		result  string
		msg     string
		value   float64
	}{
		{"all good, ambiguity allowed", []MatchInfo{ok, ok, {}}, ResultPass, "every counterpart tested: prob >= 0.9", 0.99},
		{"one bad", []MatchInfo{ok, {}, bad}, ResultFail, "spec-a: prob 0.99; spec-c: prob 0.5 < 0.9", 0.5},
		{"none matched", []MatchInfo{{}, {}, {}}, ResultSkipped, "skipped: no counterpart", nan},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := blank()
			s.Matches = c.matches
			o := one(t, rs, Context{}, s)
			if o.Result != c.result || o.Message != c.msg {
				t.Errorf("got %s %q, want %s %q", o.Result, o.Message, c.result, c.msg)
			}
			if !(o.Value == c.value || math.IsNaN(o.Value) && math.IsNaN(c.value)) {
				t.Errorf("Value %v, want %v", o.Value, c.value)
			}
		})
	}
}

func TestRequiredFields(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"req\"\nseverity = \"reject\"\ncheck = \"required_fields\"\nfields = [\"ra\", \"dec\", \"pm_ra\"]\n")
	full := blank()
	full.Values[catalog.RA], full.Values[catalog.Dec], full.Values[catalog.PMRA] = 10, -5, 0
	cases := []struct {
		name   string
		drop   []catalog.Field
		result string
		msg    string
	}{
		{"all present (zero is a value)", nil, ResultPass, "all present"},
		{"one missing", []catalog.Field{catalog.Dec}, ResultFail, "missing: dec"},
		{"two missing", []catalog.Field{catalog.RA, catalog.PMRA}, ResultFail, "missing: ra, pm_ra"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := full
			for _, f := range c.drop {
				s.Values[f] = nan
			}
			o := one(t, rs, Context{}, s)
			if o.Result != c.result || o.Message != c.msg || o.Value != float64(len(c.drop)) {
				t.Errorf("got %s %q %v", o.Result, o.Message, o.Value)
			}
		})
	}
}

func TestExpressions(t *testing.T) {
	rs := parse(t, `
[[rule]]
id = "e"
severity = "flag"
expr = "pm_total < 50 || mag > 12"

[[rule]]
id = "m"
severity = "flag"
expr = "!spec_matched || (spec_match_prob > 0.5 && !spec_ambiguous && spec_candidates < 3)"

[[rule]]
id = "w"
severity = "flag"
expr = "parallax_significance > 10"
when = "is_missing(distance) && dup_count == 0"

[[rule]]
id = "x"
severity = "flag"
expr = "is_missing(rv) || rv < 1000"
`, "spec")
	e := NewEvaluator(rs, Context{ParallaxZeroPointMas: 0.5})
	mk := func(pmRA, pmDec, mag, plx, dist, rv float64, m MatchInfo, dups int) Star {
		s := blank()
		v := &s.Values
		v[catalog.PMRA], v[catalog.PMDec], v[catalog.Mag] = pmRA, pmDec, mag
		v[catalog.Parallax], v[catalog.ParallaxErr], v[catalog.Distance], v[catalog.RV] = plx, 0.1, dist, rv
		s.Matches = []MatchInfo{m}
		s.DupCount = dups
		return s
	}
	matched := MatchInfo{Matched: true, Prob: 0.8, Candidates: 1}
	cases := []struct {
		name string
		star Star
		want map[string]string // rule id -> result
		msgs map[string]string
	}{
		// pm_total = hypot(30, 40) = 50 (3-4-5 triangle), so "< 50" is false.
		{"hypot at 50 and bright", mk(30, 40, 11, 2, nan, 10, matched, 0),
			map[string]string{"e": ResultFail, "m": ResultPass, "w": ResultPass, "x": ResultPass},
			map[string]string{"e": "false: pm_total < 50 || mag > 12"}},
		{"slow", mk(3, 4, 11, 1.4, nan, nan, MatchInfo{}, 0),
			map[string]string{"e": ResultPass, "m": ResultPass, "w": ResultFail, "x": ResultPass}, nil},
		{"mag missing", mk(3, 4, nan, 2, 8, 2000, MatchInfo{Matched: true, Prob: 0.4}, 0),
			map[string]string{"e": ResultSkipped, "m": ResultFail, "w": ResultSkipped, "x": ResultFail},
			map[string]string{"e": "skipped: mag missing", "w": "skipped: precondition is_missing(distance) && dup_count == 0 is false"}},
		{"duplicate and ambiguous", mk(3, 4, 13, 2, nan, 0, MatchInfo{Matched: true, Prob: 0.9, Ambiguous: true, Candidates: 2}, 1),
			map[string]string{"e": ResultPass, "m": ResultFail, "w": ResultSkipped, "x": ResultPass}, nil},
		{"matched prob NaN skips", mk(3, 4, 13, 2, nan, 0, MatchInfo{Matched: true, Prob: nan}, 0),
			map[string]string{"m": ResultSkipped}, map[string]string{"m": "skipped: spec_match_prob missing"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var a Assessment
			e.Assess(&c.star, &a)
			for _, o := range a.Outcomes {
				if w, ok := c.want[o.RuleID]; ok && o.Result != w {
					t.Errorf("rule %s: %s (%s), want %s", o.RuleID, o.Result, o.Message, w)
				}
				if m, ok := c.msgs[o.RuleID]; ok && o.Message != m {
					t.Errorf("rule %s: message %q, want %q", o.RuleID, o.Message, m)
				}
			}
		})
	}
}

func TestPreconditionNeedsValue(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"r\"\nseverity = \"flag\"\ncheck = \"duplicate\"\nwhen = \"mag < 12\"\n")
	o := one(t, rs, Context{}, blank())
	if o.Result != ResultSkipped || o.Message != "skipped: precondition needs mag, which is missing" {
		t.Errorf("got %s %q", o.Result, o.Message)
	}
}

func TestQualityAndOrder(t *testing.T) {
	rs := parse(t, `
[[rule]]
id = "z-reject"
severity = "reject"
check = "fit_residual"
limit = 1.4

[[rule]]
id = "a-flag"
severity = "flag"
check = "spectrum_snr"
limit = 10

[[rule]]
id = "m-flag"
severity = "flag"
check = "rv_precision"
limit = 20
`)
	e := NewEvaluator(rs, Context{})
	cases := []struct {
		name            string
		fitRes, snr, rv float64
		quality         string
		failed          string
	}{
		{"pass", 1, 20, 5, Pass, ""},
		{"flag", 1, 5, 5, Flag, "a-flag"},
		{"two flags", 1, 5, 50, Flag, "a-flag,m-flag"},
		{"reject beats flag, all rules still run", 2.31, 5, 50, Reject, "a-flag,m-flag,z-reject"},
		{"missing is never a pass but does not fail", nan, nan, nan, Pass, ""},
	}
	var a Assessment // reused on purpose
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := blank()
			s.Values[catalog.FitResidual], s.Values[catalog.SNR], s.Values[catalog.RVErr] = c.fitRes, c.snr, c.rv
			e.Assess(&s, &a)
			if a.Quality != c.quality || strings.Join(a.FailedRules, ",") != c.failed {
				t.Errorf("got %s [%s], want %s [%s]", a.Quality, strings.Join(a.FailedRules, ","), c.quality, c.failed)
			}
			ids := []string{a.Outcomes[0].RuleID, a.Outcomes[1].RuleID, a.Outcomes[2].RuleID}
			if strings.Join(ids, ",") != "a-flag,m-flag,z-reject" {
				t.Errorf("order %v", ids)
			}
			if c.quality == Reject && a.Outcomes[2].Message != "fit_residual 2.31 > 1.4" {
				t.Errorf("message %q", a.Outcomes[2].Message)
			}
			for _, o := range a.Outcomes {
				if o.Result == "" || o.Message == "" || o.Threshold == "" {
					t.Errorf("incomplete outcome %+v", o)
				}
			}
		})
	}
}

func TestMessagesSurviveReuse(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"r\"\nseverity = \"flag\"\ncheck = \"fit_residual\"\nlimit = 1.4\n")
	e := NewEvaluator(rs, Context{})
	var a Assessment
	s1 := with(catalog.FitResidual, 2)
	e.Assess(&s1, &a)
	first := a.Outcomes[0].Message
	s2 := with(catalog.FitResidual, 1)
	e.Assess(&s2, &a)
	if first != "fit_residual 2 > 1.4" || a.Outcomes[0].Message != "fit_residual <= 1.4" || a.Outcomes[0].Value != 1 {
		t.Errorf("messages %q then %q", first, a.Outcomes[0].Message)
	}
}

func TestAssessAllMatchesAssess(t *testing.T) {
	rs, err := rules.Default(rules.Schema{Catalogs: []string{"spec-a", "phot-b"}})
	if err != nil {
		t.Fatal(err)
	}
	e := NewEvaluator(rs, Context{ParallaxZeroPointMas: -0.02})
	stars := benchStars(5000, 3)
	got := e.AssessAll(context.Background(), stars, 2)
	counts := map[string]int{}
	var a Assessment
	for i := range stars {
		e.Assess(&stars[i], &a)
		g := got[i]
		if g.Quality != a.Quality || strings.Join(g.FailedRules, ",") != strings.Join(a.FailedRules, ",") || len(g.Outcomes) != len(a.Outcomes) {
			t.Fatalf("star %d: %s %v vs %s %v", i, g.Quality, g.FailedRules, a.Quality, a.FailedRules)
		}
		for j := range a.Outcomes {
			if g.Outcomes[j].Message != a.Outcomes[j].Message {
				t.Fatalf("star %d rule %s: %q vs %q", i, a.Outcomes[j].RuleID, g.Outcomes[j].Message, a.Outcomes[j].Message)
			}
		}
		counts[a.Quality]++
	}
	// The invented sample is built to exercise all three outcomes.
	if counts[Pass] == 0 || counts[Flag] == 0 || counts[Reject] == 0 {
		t.Errorf("quality counts %v", counts)
	}
}

func TestAssessAllCancelled(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"r\"\nseverity = \"flag\"\ncheck = \"duplicate\"\n")
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	out := NewEvaluator(rs, Context{}).AssessAll(ctx, make([]Star, 10), 2)
	for i, a := range out {
		if a.Quality != "" {
			t.Errorf("star %d assessed after cancel", i)
		}
	}
	if err := NewEvaluator(rs, Context{}).Each(ctx, make([]Star, 3), 1, func(int, *Assessment) {}); err == nil {
		t.Error("Each returned nil after cancel")
	}
}

// TestEachFinishesStartedBatch: a cancel stops Each between batches; the
// batch already started is finished (one worker, so exactly one batch).
func TestEachFinishesStartedBatch(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"r\"\nseverity = \"flag\"\ncheck = \"duplicate\"\n")
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	calls := 0
	err := NewEvaluator(rs, Context{}).Each(ctx, make([]Star, 3*batch), 1, func(int, *Assessment) {
		calls++
		cancel()
	})
	if !errors.Is(err, context.Canceled) || calls != batch {
		t.Errorf("err %v after %d stars, want context.Canceled after %d", err, calls, batch)
	}
}

func TestAssessmentReusedAcrossRuleSets(t *testing.T) {
	asFlag := parse(t, "[[rule]]\nid = \"r\"\nseverity = \"flag\"\ncheck = \"fit_residual\"\nlimit = 1.4\n")
	asReject := parse(t, "[[rule]]\nid = \"r\"\nseverity = \"reject\"\ncheck = \"fit_residual\"\nlimit = 1.4\n")
	s := with(catalog.FitResidual, 3)
	var a Assessment
	NewEvaluator(asFlag, Context{}).Assess(&s, &a)
	NewEvaluator(asReject, Context{}).Assess(&s, &a)
	if a.Outcomes[0].Severity != "reject" || a.Quality != Reject {
		t.Errorf("stale outcome %+v quality %s", a.Outcomes[0], a.Quality)
	}
}

func TestMatchAmbiguityOnly(t *testing.T) {
	rs := parse(t, "[[rule]]\nid = \"m\"\nseverity = \"flag\"\ncheck = \"match\"\ncatalog = \"spec\"\n", "spec")
	cases := []struct {
		m      MatchInfo
		result string
		msg    string
	}{
		{MatchInfo{Matched: true, Prob: nan, SepArcsec: nan, Candidates: 1}, ResultPass, "every counterpart tested: unambiguous"},
		{MatchInfo{Matched: true, Ambiguous: true, Candidates: 2}, ResultFail, "spec: ambiguous (2 candidates)"},
	}
	for _, c := range cases {
		t.Run(c.msg, func(t *testing.T) {
			s := blank()
			s.Matches = []MatchInfo{c.m}
			o := one(t, rs, Context{}, s)
			if o.Result != c.result || o.Message != c.msg {
				t.Errorf("got %s %q", o.Result, o.Message)
			}
		})
	}
}
