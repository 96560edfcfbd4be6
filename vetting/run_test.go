package vetting

import (
	"context"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"starvet/campaign"
	"starvet/db"
	"starvet/scenario"
)

// smallScenario writes an invented campaign of n stars into a temp dir.
func smallScenario(t *testing.T, n int, seed uint64) *scenario.Scenario {
	t.Helper()
	sc, err := scenario.Generate(scenario.Config{Seed: seed, Stars: n, Samples: 200}, t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	return sc
}

func runCampaign(t *testing.T, path, ledger string, full bool) *Summary {
	t.Helper()
	c, err := campaign.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	e := &Engine{}
	sum, err := e.Run(context.Background(), c, RunOptions{LedgerPath: ledger, Full: full})
	if err != nil {
		t.Fatal(err)
	}
	return sum
}

// verdictsOf returns a run's verdicts keyed by star, without the columns
// that name runs.
func verdictsOf(t *testing.T, ledger string, run int64) map[string]db.VerdictRow {
	t.Helper()
	l, err := db.Open(context.Background(), ledger, db.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	out := map[string]db.VerdictRow{}
	err = l.List(context.Background(), db.ListFilter{Run: run}, func(v db.VerdictRow) error {
		v.RunID, v.ComputedInRun = 0, 0
		out[v.StarID] = v
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// TestIncrementalEqualsFull: after a catalog update, an incremental run must
// give exactly the verdicts of a full run over the same files.
func TestIncrementalEqualsFull(t *testing.T) {
	sc := smallScenario(t, 3000, 11)
	dir := sc.Dir
	inc := filepath.Join(dir, "incremental.db")
	full := filepath.Join(dir, "full.db")
	runCampaign(t, sc.CampaignPath, inc, false)
	if err := scenario.Update(sc, dir, 12); err != nil {
		t.Fatal(err)
	}
	s2 := runCampaign(t, sc.CampaignPath, inc, false)
	if s2.RecomputeAll != "" {
		t.Fatalf("second run recomputed everything: %s", s2.RecomputeAll)
	}
	if s2.Carried == 0 || s2.Computed == 0 {
		t.Fatalf("incremental run computed %d and carried %d; want both > 0", s2.Computed, s2.Carried)
	}
	if s2.Computed > len(sc.Truth)/4 {
		t.Errorf("incremental run recomputed %d of %d stars after a small update", s2.Computed, len(sc.Truth))
	}
	sf := runCampaign(t, sc.CampaignPath, full, true)
	a, b := verdictsOf(t, inc, s2.RunID), verdictsOf(t, full, sf.RunID)
	if len(a) != len(b) {
		t.Fatalf("incremental run has %d verdicts, full run %d", len(a), len(b))
	}
	diff := 0
	for id, va := range a {
		vb, ok := b[id]
		if !ok {
			t.Errorf("star %q missing from the full run", id)
			continue
		}
		if !reflect.DeepEqual(nanless(va), nanless(vb)) {
			diff++
			if diff <= 5 {
				t.Errorf("star %q: incremental %+v\nfull %+v", id, va, vb)
			}
		}
	}
	if diff > 0 {
		t.Errorf("%d of %d verdicts differ between incremental and full runs", diff, len(a))
	}
}

// nanless replaces NaN by a sentinel so that DeepEqual compares missing
// values as equal.
func nanless(v db.VerdictRow) db.VerdictRow {
	for _, p := range []*float64{&v.SpeedP16Kms, &v.SpeedP50Kms, &v.SpeedP84Kms, &v.SpeedLowerP50Kms, &v.RGCKpc,
		&v.VEscKms, &v.PUnbound, &v.PUnboundLower, &v.PGCOrigin, &v.GCConsistency, &v.FlightTimeMyr} {
		if *p != *p {
			*p = -1e300
		}
	}
	return v
}

// TestRerunCarriesEverything: an unchanged rerun recomputes nothing.
func TestRerunCarriesEverything(t *testing.T) {
	sc := smallScenario(t, 1500, 5)
	ledger := filepath.Join(sc.Dir, "l.db")
	s1 := runCampaign(t, sc.CampaignPath, ledger, false)
	s2 := runCampaign(t, sc.CampaignPath, ledger, false)
	if s2.Computed != 0 || s2.Carried != s1.Computed {
		t.Fatalf("unchanged rerun: computed %d, carried %d; want 0 and %d", s2.Computed, s2.Carried, s1.Computed)
	}
	if !reflect.DeepEqual(s1.Counts, s2.Counts) {
		t.Fatalf("counts changed on an unchanged rerun: %v then %v", s1.Counts, s2.Counts)
	}
	if len(s2.Transitions) != 0 {
		t.Fatalf("transitions on an unchanged rerun: %v", s2.Transitions)
	}
	_ = os.Remove(ledger)
}
