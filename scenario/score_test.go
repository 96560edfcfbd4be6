package scenario

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/galaxy/orbit"
	"starvet/verdict"
)

// handTruth is a small hand-made truth table.
func handTruth() []TruthRow {
	nan := math.NaN()
	row := func(id, pop string, unbound, adequate bool, trap string) TruthRow {
		r := TruthRow{StarID: id, Population: pop, TrulyUnbound: unbound, AdequateData: adequate, Trap: trap,
			Artefact: trap != "" && trap != TrapHighPM, FlightTimeMyrTrue: nan, MarginSigma: nan}
		if adequate {
			r.MarginSigma = 5
		}
		r.Decidable = unbound && adequate && r.MarginSigma >= DecidableSigma
		return r
	}
	close := row("run2", PopDiskRunaway, true, true, "") // unbound by less than its errors can show
	close.MarginSigma, close.Decidable = 1, false
	return []TruthRow{
		close,
		row("gc1", PopGCEjectee, true, true, ""),
		row("gc2", PopGCEjectee, true, true, ""),
		row("gc3", PopGCEjectee, true, false, ""), // no usable data: not in the denominator
		row("gc4", PopGCEjectee, false, true, ""), // bound ejectee
		row("run1", PopDiskRunaway, true, true, ""),
		row("fast1", PopHaloFast, false, true, ""),
		row("bin1", PopThickDisk, false, false, TrapBinary),
		row("dup1", PopHalo, false, false, TrapDuplicate),
		row("hpm1", PopThickDisk, false, true, TrapHighPM),
		row("bad1", PopThinDisk, false, false, TrapBadValue),
		row("back1", PopThinDisk, false, false, ""),
	}
}

func TestScore(t *testing.T) {
	truth := handTruth()
	for i := range truth {
		if truth[i].Trap == TrapHighPM {
			truth[i].HasSpectrum = true
		}
	}
	perfect := map[string]Verdict{
		"gc1": {verdict.Unbound, orbit.OriginGC}, "gc2": {verdict.Unbound, orbit.OriginGC},
		"gc3": {verdict.NeedsRV, ""}, "gc4": {verdict.Bound, orbit.OriginGC}, "run1": {verdict.Unbound, orbit.OriginDisk},
		"fast1": {verdict.Bound, orbit.OriginUntraced}, "bin1": {verdict.Rejected, ""}, "dup1": {verdict.Rejected, ""},
		"hpm1": {verdict.Bound, orbit.OriginDisk}, "back1": {verdict.Rejected, ""}, "run2": {verdict.Marginal, ""},
	}
	with := func(changes map[string]Verdict, drop ...string) map[string]Verdict {
		m := map[string]Verdict{}
		for k, v := range perfect {
			m[k] = v
		}
		for k, v := range changes {
			m[k] = v
		}
		for _, k := range drop {
			delete(m, k)
		}
		return m
	}
	cases := []struct {
		name     string
		verdicts map[string]Verdict
		// want: completeness hits/denominator, contaminating/unbound,
		// origin hits/denominator (as ratios), plus counters.
		compl, contam, origin, hpm float64
		nUnbound, nContam          int
		traps, bound               map[string]int
		badKept, missing, unknown  int
		meets                      bool
	}{
		{name: "perfect", verdicts: perfect, compl: 1, contam: 0, origin: 1, hpm: 1, nUnbound: 3, meets: true},
		{name: "one miss", verdicts: with(map[string]Verdict{"gc2": {verdict.Marginal, ""}}),
			compl: 2.0 / 3, contam: 0, origin: 1, hpm: 1, nUnbound: 2},
		{name: "artefact unbound", verdicts: with(map[string]Verdict{"bin1": {verdict.Unbound, orbit.OriginUntraced}}),
			compl: 1, contam: 0.25, origin: 1, hpm: 1, nUnbound: 4, nContam: 1, traps: map[string]int{TrapBinary: 1}},
		{name: "bound fast star unbound", verdicts: with(map[string]Verdict{"fast1": {verdict.Unbound, orbit.OriginUntraced}}),
			compl: 1, contam: 0.25, origin: 1, hpm: 1, nUnbound: 4, nContam: 1, bound: map[string]int{PopHaloFast: 1}},
		{name: "bound ejectee unbound, wrong origin", verdicts: with(map[string]Verdict{"gc4": {verdict.Unbound, orbit.OriginDisk}}),
			compl: 1, contam: 0.25, origin: 2.0 / 3, hpm: 1, nUnbound: 4, nContam: 1, bound: map[string]int{PopGCEjectee: 1}},
		{name: "wrong origin", verdicts: with(map[string]Verdict{"gc1": {verdict.Unbound, orbit.OriginUntraced}}),
			compl: 1, contam: 0, origin: 0.5, hpm: 1, nUnbound: 3, meets: true},
		{name: "unknown id unbound", verdicts: with(map[string]Verdict{"ghost": {verdict.Unbound, ""}}),
			compl: 1, contam: 0.25, origin: 1, hpm: 1, nUnbound: 4, nContam: 1, unknown: 1},
		{name: "bad row kept and high-pm unmatched", verdicts: with(map[string]Verdict{"bad1": {verdict.Bound, ""}, "hpm1": {verdict.NeedsRV, ""}}),
			compl: 1, contam: 0, origin: 1, hpm: 0, nUnbound: 3, badKept: 1, meets: true},
		{name: "missing verdicts", verdicts: with(nil, "gc1", "back1"),
			compl: 2.0 / 3, contam: 0, origin: 1, hpm: 1, nUnbound: 2, missing: 2},
		{name: "nothing unbound", verdicts: map[string]Verdict{},
			compl: 0, contam: math.NaN(), origin: math.NaN(), hpm: 0, nUnbound: 0, missing: 11},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f := Score(truth, c.verdicts)
			check := func(what string, got, want float64) {
				if !(got == want || math.Abs(got-want) < 1e-12 || (math.IsNaN(got) && math.IsNaN(want))) {
					t.Errorf("%s = %v, want %v", what, got, want)
				}
			}
			check("completeness", f.Completeness, c.compl)
			check("contamination", f.Contamination, c.contam)
			check("origin accuracy", f.OriginAccuracy, c.origin)
			check("high-pm with rv", f.HighPMWithRV, c.hpm)
			if f.NCompletenessDenominator != 3 {
				t.Errorf("completeness denominator %d, want 3 (gc1, gc2, run1)", f.NCompletenessDenominator)
			}
			// run2 joins the every-margin denominator and is missed
			// (marginal, or absent) in every case.
			if f.NAdequateDenominator != 4 || f.NAdequateHits != f.NCompletenessHits {
				t.Errorf("every-margin completeness %d/%d, want %d/4", f.NAdequateHits, f.NAdequateDenominator, f.NCompletenessHits)
			}
			if f.NUnbound != c.nUnbound || f.NContaminating != c.nContam {
				t.Errorf("unbound %d contaminating %d, want %d %d", f.NUnbound, f.NContaminating, c.nUnbound, c.nContam)
			}
			if len(f.TrapsUnbound) != len(c.traps) || len(f.BoundUnbound) != len(c.bound) {
				t.Errorf("traps %v bound %v, want %v %v", f.TrapsUnbound, f.BoundUnbound, c.traps, c.bound)
			}
			for k, v := range c.traps {
				if f.TrapsUnbound[k] != v {
					t.Errorf("traps %s = %d, want %d", k, f.TrapsUnbound[k], v)
				}
			}
			for k, v := range c.bound {
				if f.BoundUnbound[k] != v {
					t.Errorf("bound %s = %d, want %d", k, f.BoundUnbound[k], v)
				}
			}
			if f.BadRowsKept != c.badKept || f.NBadRows != 1 || f.Missing != c.missing || f.Unknown != c.unknown {
				t.Errorf("bad kept %d/%d missing %d unknown %d, want %d/1 %d %d", f.BadRowsKept, f.NBadRows, f.Missing, f.Unknown,
					c.badKept, c.missing, c.unknown)
			}
			if f.MeetsTargets() != c.meets {
				t.Errorf("MeetsTargets = %v, want %v (%s)", f.MeetsTargets(), c.meets, f)
			}
		})
	}
}

// TestScoreOracle scores a generated scenario with verdicts read off the
// truth (what a perfect pipeline would say) and with everything "unbound".
func TestScoreOracle(t *testing.T) {
	s, _ := generate(t, 17)
	oracle := map[string]Verdict{}
	all := map[string]Verdict{}
	for _, r := range s.Truth {
		all[r.StarID] = Verdict{Status: verdict.Unbound}
		if r.Trap == TrapBadValue {
			continue
		}
		v := Verdict{Status: verdict.Bound, Origin: orbit.OriginUntraced}
		switch {
		case r.Artefact:
			v.Status = verdict.Rejected
		case !r.AdequateData:
			v.Status = verdict.NeedsRV
		case r.TrulyUnbound:
			v.Status = verdict.Unbound
		}
		if r.OriginTrue == orbit.OriginGC {
			v.Origin = orbit.OriginGC
		}
		oracle[r.StarID] = v
	}
	f := Score(s.Truth, oracle)
	if f.Completeness != 1 || f.Contamination != 0 || f.OriginAccuracy != 1 || !f.MeetsTargets() || f.Missing != 0 {
		t.Errorf("oracle: %s", f)
	}
	g := Score(s.Truth, all)
	if g.NUnbound != len(s.Truth) || g.Completeness != 1 || g.MeetsTargets() || g.BadRowsKept != g.NBadRows {
		t.Errorf("all unbound: %s", g)
	}
	// Contamination of "everything unbound" is the share of bound or
	// artefact rows, counted here independently.
	n := 0
	for _, r := range s.Truth {
		if !r.TrulyUnbound || r.Artefact {
			n++
		}
	}
	if g.NContaminating != n {
		t.Errorf("contaminating %d, want %d", g.NContaminating, n)
	}
}

func TestLoadTruthErrors(t *testing.T) {
	header := strings.Join(truthHeader, ",")
	good := "PL-1,halo,false,true,,false,,false,halo,,300,500,4,1,2,3,4,5,6,true,true,VB-1"
	cases := []struct {
		name       string
		text       string
		line, col  int
		reasonPart string
	}{
		{"bad bool", header + "\n" + good + "\n" + strings.Replace(good, "halo,false,true", "halo,maybe,true", 1) + "\n", 3, 3, "truly_unbound"},
		{"bad number", header + "\n" + strings.Replace(good, ",300,", ",3o0,", 1) + "\n", 2, 11, "v_gc_true_kms"},
		{"missing column", strings.Replace(header, ",spec_id", "", 1) + "\n", 1, 22, "spec_id"},
		{"short row", header + "\n" + "PL-1,halo\n", 2, 3, "fields"},
		{"empty id", header + "\n" + strings.Replace(good, "PL-1", "", 1) + "\n", 2, 1, "star_id"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := filepath.Join(t.TempDir(), "truth.csv")
			if err := os.WriteFile(p, []byte(c.text), 0o644); err != nil {
				t.Fatal(err)
			}
			_, err := LoadTruth(p)
			var te *TruthError
			if !errors.As(err, &te) || !errors.Is(err, ErrTruth) {
				t.Fatalf("err = %v, want a *TruthError wrapping ErrTruth", err)
			}
			if te.Line != c.line || te.Column != c.col || !strings.Contains(te.Reason, c.reasonPart) || te.File != p {
				t.Errorf("got %v, want %s:%d:%d (%s)", err, p, c.line, c.col, c.reasonPart)
			}
		})
	}
	t.Run("good", func(t *testing.T) {
		p := filepath.Join(t.TempDir(), "truth.csv")
		os.WriteFile(p, []byte(header+"\n"+good+"\n"), 0o644)
		rows, err := LoadTruth(p)
		if err != nil || len(rows) != 1 {
			t.Fatalf("rows %v err %v", rows, err)
		}
		r := rows[0]
		if r.StarID != "PL-1" || r.TrulyUnbound || !r.AdequateData || r.VGCTrueKms != 300 || r.PosKpc != [3]float64{1, 2, 3} ||
			!math.IsNaN(r.FlightTimeMyrTrue) || r.SpecID != "VB-1" {
			t.Errorf("row %+v", r)
		}
	})
}
