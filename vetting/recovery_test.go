package vetting

import (
	"context"
	"path/filepath"
	"testing"

	"starvet/db"
	"starvet/galaxy/orbit"
	"starvet/scenario"
	"starvet/verdict"
)

// TestRecoveryOnSmallScenarios runs the demo's job (generate, run, update,
// incremental run) on six small invented scenarios and scores the final
// verdicts against the truth with the demo's own figures and targets
// (completeness >= 95% over the decidable injected unbound stars,
// contamination <= 2%). A small scenario holds ten or so unbound stars, so
// one borderline star moves its figures by ten per cent: the targets are
// checked on the pooled counts of the fixed seeds. The deterministic parts
// are required of every seed: no artefact ends unbound, every bad row is
// quarantined, every high-proper-motion star with a spectrum is matched.
func TestRecoveryOnSmallScenarios(t *testing.T) {
	if testing.Short() {
		t.Skip("runs six 10,000-star campaigns")
	}
	var hits, denom, contaminating, unbound int
	for _, seed := range []uint64{1, 2, 3, 4, 5, 6} {
		dir := t.TempDir()
		sc, err := scenario.Generate(scenario.Config{Seed: seed, Stars: 10000}, dir)
		if err != nil {
			t.Fatal(err)
		}
		ledger := filepath.Join(dir, "starvet.db")
		runCampaign(t, sc.CampaignPath, ledger, false)
		if err := scenario.Update(sc, dir, seed+1); err != nil {
			t.Fatal(err)
		}
		s2 := runCampaign(t, sc.CampaignPath, ledger, false)
		verdicts := map[string]scenario.Verdict{}
		l, err := db.Open(context.Background(), ledger, db.Options{ReadOnly: true})
		if err != nil {
			t.Fatal(err)
		}
		err = l.List(context.Background(), db.ListFilter{Run: s2.RunID}, func(v db.VerdictRow) error {
			verdicts[v.StarID] = scenario.Verdict{Status: verdict.Status(v.Status), Origin: orbit.Origin(v.Origin)}
			return nil
		})
		l.Close()
		if err != nil {
			t.Fatal(err)
		}
		f := scenario.Score(sc.Truth, verdicts)
		t.Logf("seed %d: %s", seed, f)
		for trap, n := range f.TrapsUnbound {
			t.Errorf("seed %d: %d artefacts of kind %s end unbound", seed, n, trap)
		}
		if f.BadRowsKept != 0 {
			t.Errorf("seed %d: %d of %d bad rows kept a status", seed, f.BadRowsKept, f.NBadRows)
		}
		if f.NHighPM == 0 || f.HighPMWithRV != 1 {
			t.Errorf("seed %d: high-proper-motion stars matched to their spectrum: %.2f of %d, want all", seed, f.HighPMWithRV, f.NHighPM)
		}
		if f.Missing != 0 || f.Unknown != 0 {
			t.Errorf("seed %d: %d truth rows without a verdict, %d verdicts not in the truth", seed, f.Missing, f.Unknown)
		}
		hits += f.NCompletenessHits
		denom += f.NCompletenessDenominator
		contaminating += f.NContaminating
		unbound += f.NUnbound
	}
	completeness := float64(hits) / float64(denom)
	contamination := float64(contaminating) / float64(unbound)
	t.Logf("pooled: completeness %.3f (%d/%d), contamination %.3f (%d/%d)", completeness, hits, denom, contamination, contaminating, unbound)
	if denom < 40 {
		t.Fatalf("only %d decidable injected unbound stars: the scenarios are too small to score", denom)
	}
	if completeness < scenario.TargetCompleteness {
		t.Errorf("pooled completeness %.3f < %.2f", completeness, scenario.TargetCompleteness)
	}
	if contamination > scenario.TargetContamination {
		t.Errorf("pooled contamination %.3f > %.2f", contamination, scenario.TargetContamination)
	}
}
