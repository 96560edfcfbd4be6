package vetting

import (
	"reflect"
	"testing"

	"starvet/db"
	"starvet/verdict"
)

// The cases are built by hand from the rules makePlan documents (carry an
// unchanged star, compute a new or changed one, withdraw a vanished one
// once); no ledger is involved.
func TestMakePlan(t *testing.T) {
	type star struct{ id, status, hash string }
	prevSet := func(ss ...star) *db.PrevSet {
		p := &db.PrevSet{}
		for _, s := range ss {
			p.IDs = append(p.IDs, s.id)
			p.Stars = append(p.Stars, db.PrevStar{Status: s.status, InputHash: s.hash, ComputedInRun: 1})
		}
		return p
	}
	bound, withdrawn := string(verdict.Bound), string(verdict.Withdrawn)
	cases := []struct {
		name         string
		prev         *db.PrevSet
		ids, hashes  []string // primary rows, in catalog (not id) order
		recomputeAll bool
		compute      []int // rows, in id order
		withdraw     []string
		was          map[string]string
		carried      map[verdict.Status]int
	}{
		{name: "first run: every star new", prev: prevSet(),
			ids: []string{"b", "a"}, hashes: []string{"hb", "ha"},
			compute: []int{1, 0}, was: map[string]string{}, carried: map[verdict.Status]int{}},
		{name: "unchanged star carried", prev: prevSet(star{"a", bound, "ha"}),
			ids: []string{"a"}, hashes: []string{"ha"},
			was: map[string]string{}, carried: map[verdict.Status]int{verdict.Bound: 1}},
		{name: "changed hash computed", prev: prevSet(star{"a", bound, "ha"}, star{"b", string(verdict.Unbound), "hb"}),
			ids: []string{"b", "a"}, hashes: []string{"hb", "ha2"},
			compute: []int{1}, was: map[string]string{"a": bound}, carried: map[verdict.Status]int{verdict.Unbound: 1}},
		{name: "new star beside carried ones", prev: prevSet(star{"a", bound, "ha"}, star{"c", bound, "hc"}),
			ids: []string{"c", "b", "a"}, hashes: []string{"hc", "hb", "ha"},
			compute: []int{1}, was: map[string]string{}, carried: map[verdict.Status]int{verdict.Bound: 2}},
		{name: "star gone withdrawn", prev: prevSet(star{"a", bound, "ha"}, star{"b", string(verdict.NeedsRV), "hb"}, star{"c", bound, "hc"}),
			ids: []string{"b"}, hashes: []string{"hb"},
			withdraw: []string{"a", "c"}, was: map[string]string{"a": bound, "c": bound},
			carried: map[verdict.Status]int{verdict.NeedsRV: 1}},
		{name: "already withdrawn star carried, not withdrawn again", prev: prevSet(star{"a", withdrawn, ""}, star{"b", bound, "hb"}),
			ids: []string{"b"}, hashes: []string{"hb"},
			was: map[string]string{}, carried: map[verdict.Status]int{verdict.Withdrawn: 1, verdict.Bound: 1}},
		{name: "withdrawn star back is computed", prev: prevSet(star{"a", withdrawn, ""}),
			ids: []string{"a"}, hashes: []string{""},
			compute: []int{0}, was: map[string]string{"a": withdrawn}, carried: map[verdict.Status]int{}},
		{name: "recompute all: unchanged stars computed", prev: prevSet(star{"a", bound, "ha"}, star{"b", string(verdict.Rejected), "hb"}),
			ids: []string{"b", "a"}, hashes: []string{"hb", "ha"}, recomputeAll: true,
			compute: []int{1, 0}, was: map[string]string{"a": bound, "b": string(verdict.Rejected)}, carried: map[verdict.Status]int{}},
		{name: "recompute all: gone withdrawn, already withdrawn carried",
			prev: prevSet(star{"a", bound, "ha"}, star{"b", withdrawn, ""}, star{"c", bound, "hc"}),
			ids:  []string{"c"}, hashes: []string{"hc"}, recomputeAll: true,
			compute: []int{0}, withdraw: []string{"a"}, was: map[string]string{"a": bound, "c": bound},
			carried: map[verdict.Status]int{verdict.Withdrawn: 1}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := makePlan(c.prev, c.ids, idOrder(c.ids), c.hashes, c.recomputeAll)
			if !reflect.DeepEqual(p.compute, c.compute) {
				t.Errorf("compute %v, want %v", p.compute, c.compute)
			}
			if !reflect.DeepEqual(p.withdraw, c.withdraw) {
				t.Errorf("withdraw %v, want %v", p.withdraw, c.withdraw)
			}
			if !reflect.DeepEqual(p.was, c.was) {
				t.Errorf("was %v, want %v", p.was, c.was)
			}
			if !reflect.DeepEqual(p.carried, c.carried) {
				t.Errorf("carried %v, want %v", p.carried, c.carried)
			}
			n := 0
			for _, k := range c.carried {
				n += k
			}
			if p.nCarried != n {
				t.Errorf("nCarried %d, want %d", p.nCarried, n)
			}
		})
	}
}

// The reasons are the words Summary.RecomputeAll has always carried; the
// order of the checks decides which reason wins when several hold.
func TestRecomputeAllReason(t *testing.T) {
	prev := &db.Run{ID: 3, RulesetHash: "r1", ModelHash: "m1"}
	cases := []struct {
		name       string
		prev       *db.Run
		full       bool
		rules, mod string
		want       string
	}{
		{"first run", nil, false, "r1", "m1", "first run of this ledger"},
		{"first run with --full", nil, true, "r2", "m2", "first run of this ledger"},
		{"--full", prev, true, "r2", "m2", "--full"},
		{"rule set changed", prev, false, "r2", "m2", "the rule set changed"},
		{"model changed", prev, false, "r1", "m2", "the model settings changed"},
		{"incremental", prev, false, "r1", "m1", ""},
	}
	for _, c := range cases {
		if got := recomputeAllReason(c.prev, c.full, c.rules, c.mod); got != c.want {
			t.Errorf("%s: %q, want %q", c.name, got, c.want)
		}
	}
}

// Thresholds as a campaign sets them (from memory of the example campaign:
// unbound at 0.95, marginal at 0.5); each boundary belongs to the higher
// status, as doc.go states ("at or above").
func TestPUnboundStatus(t *testing.T) {
	for _, c := range []struct {
		p    float64
		want verdict.Status
	}{{0.99, verdict.Unbound}, {0.95, verdict.Unbound}, {0.9499, verdict.Marginal}, {0.5, verdict.Marginal}, {0.4999, verdict.Bound}, {0, verdict.Bound}} {
		if got := pUnboundStatus(c.p, 0.95, 0.5); got != c.want {
			t.Errorf("p_unbound %g: %s, want %s", c.p, got, c.want)
		}
	}
}
