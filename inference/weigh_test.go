package inference

import (
	"context"
	"math"
	"os"
	"strings"
	"testing"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/scenario"
	"starvet/vetting"
)

// vetScenario writes an invented scenario, vets it and returns the
// campaign and the ledger path.
func vetScenario(t *testing.T, cfg scenario.Config) (*campaign.Campaign, string, *vetting.Summary) {
	t.Helper()
	dir := t.TempDir()
	sc, err := scenario.Generate(cfg, dir)
	if err != nil {
		t.Fatal(err)
	}
	c, err := campaign.Load(sc.CampaignPath)
	if err != nil {
		t.Fatal(err)
	}
	e := &vetting.Engine{Workers: 2, ToolVersion: "test"}
	sum, err := e.Run(context.Background(), c, vetting.RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return c, sum.LedgerPath, sum
}

// weighScenarioLedger vets the scenario cfg, weighs its run with the
// default options and returns the open ledger (closed with the test), the
// result and the vetting summary.
func weighScenarioLedger(t *testing.T, cfg scenario.Config) (*db.Ledger, *Result, *vetting.Summary) {
	t.Helper()
	c, ledger, sum := vetScenario(t, cfg)
	l, err := db.Open(context.Background(), ledger, db.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { l.Close() })
	r, err := Weigh(context.Background(), l, c, Options{Workers: 2, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	return l, r, sum
}

// A star's draws made again from its stored inputs, the rules it failed
// and the run's settings are the run's own draws: the speed percentiles
// come back bit for bit (the property that lets weigh store no draws).
func TestRedrawIsTheRunsDraws(t *testing.T) {
	if testing.Short() {
		t.Skip("vets a scenario")
	}
	ctx := context.Background()
	c, ledger, _ := vetScenario(t, scenario.Config{Seed: 3, Stars: 3000})
	l, err := db.Open(ctx, ledger, db.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	run, err := l.LastCompleteRun(ctx)
	if err != nil {
		t.Fatal(err)
	}
	rs, err := vetting.LoadRules(c, "")
	if err != nil {
		t.Fatal(err)
	}
	model, _, err := vetting.Model(c)
	if err != nil {
		t.Fatal(err)
	}
	var cands []db.KinematicCandidate
	if _, err := l.KinematicCandidates(ctx, run.ID, 0, func(k db.KinematicCandidate) error {
		cands = append(cands, k)
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if len(cands) < 50 {
		t.Fatalf("only %d candidates", len(cands))
	}
	set := vetting.KinematicSettings(c)
	stars := make([]kinematics.Star, len(cands))
	for k := range cands {
		stars[k] = vetting.KinematicInput(cands[k].Verdict.StarID, &cands[k].Inputs, cands[k].Failed, rs)
	}
	res, err := kinematics.EvaluateAll(ctx, stars, &set, model, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	voided := 0
	for k, r := range res {
		v := cands[k].Verdict
		if len(cands[k].Failed) > 0 {
			voided++
		}
		got := [3]float64{r.SpeedKms[0], r.SpeedKms[1], r.SpeedKms[2]}
		want := [3]float64{v.SpeedP16Kms, v.SpeedP50Kms, v.SpeedP84Kms}
		if got != want || r.Samples != v.SamplesUsed {
			t.Fatalf("star %s: drawn again %v (%d draws), the run stored %v (%d draws)", v.StarID, got, r.Samples, want, v.SamplesUsed)
		}
	}
	t.Logf("%d stars drawn again identically (%d with failed rules)", len(cands), voided)
}

func TestWeighStoresAndAudits(t *testing.T) {
	if testing.Short() {
		t.Skip("vets a scenario")
	}
	ctx := context.Background()
	l, r, sum := weighScenarioLedger(t, scenario.Config{Seed: 5, Stars: 4000})
	if r.InferenceID <= 0 || r.RunID != sum.RunID {
		t.Fatalf("inference %d of run %d, want a stored one of run %d", r.InferenceID, r.RunID, sum.RunID)
	}
	e := r.EscapeSpeedKms
	if e.Stars == 0 || !(e.Lo90 <= e.Lo68 && e.Lo68 <= e.Median && e.Median <= e.Hi68 && e.Hi68 <= e.Hi90) || math.IsNaN(e.Median) {
		t.Fatalf("escape speed %+v", e)
	}
	t.Logf("escape speed %.0f [%.0f, %.0f] km/s from %d stars; M200 tail %.3g, orbits %.3g; excluded %v; notes %v",
		e.Median, e.Lo90, e.Hi90, e.Stars, r.HaloMassTailMsun.Median, r.HaloMassOrbitsMsun.Median, r.Excluded, r.Notes)
	// Every star of the run is accounted for: considered by the methods,
	// or counted as excluded with its reason.
	var excluded int64
	for _, n := range r.Excluded {
		excluded += n
	}
	considered := map[string]bool{}
	used := ""
	all := sum.Computed + sum.Carried
	// Read back through the audit path, down to the speed Weigh reads
	// (the tail takes candidates down to tailCandidateFraction of v_min).
	var cands []db.KinematicCandidate
	if _, err := l.KinematicCandidates(ctx, r.RunID, min(tailCandidateFraction*DefaultVMinKms, DefaultEjecteeMinKms), func(k db.KinematicCandidate) error {
		cands = append(cands, k)
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	for _, k := range cands {
		got, ids, err := l.StarInferences(ctx, k.Verdict.StarID)
		if err != nil {
			t.Fatal(err)
		}
		if len(got) != 2 || ids[0] != r.InferenceID {
			t.Fatalf("star %s: %d method entries in inference %v, want 2 in %d", k.Verdict.StarID, len(got), ids, r.InferenceID)
		}
		for _, g := range got {
			if g.Reason == "" {
				t.Errorf("star %s, %s: no reason", k.Verdict.StarID, g.Method)
			}
			if g.Used && g.Method == MethodTail {
				used = k.Verdict.StarID
			}
		}
		considered[k.Verdict.StarID] = true
	}
	if int64(len(considered))+excluded != int64(all) {
		t.Errorf("%d stars considered + %d excluded, the run holds %d", len(considered), excluded, all)
	}
	if used == "" {
		t.Error("no star is recorded as used by the tail fit")
	}
}

// Each candidate ejectee's reason says whether it carries the orbit fit,
// and the stars it names are those the estimate counts: on a scenario with
// 300 ejectees set apart, where some carry it.
func TestWeighRecordsCarryingStars(t *testing.T) {
	if testing.Short() {
		t.Skip("vets a scenario")
	}
	ctx := context.Background()
	l, r, _ := weighScenarioLedger(t, scenario.Config{Seed: 5, Stars: 4000, Ejectees: 300})
	// Read back through the audit path (starvet why), star by star.
	var ids []string
	if _, err := l.KinematicCandidates(ctx, r.RunID, DefaultEjecteeMinKms, func(k db.KinematicCandidate) error {
		ids = append(ids, k.Verdict.StarID)
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	carrying, candidates := 0, 0
	for _, id := range ids {
		got, _, err := l.StarInferences(ctx, id)
		if err != nil {
			t.Fatal(err)
		}
		for _, g := range got {
			if !g.Used || g.Method != MethodOrbits {
				continue
			}
			candidates++
			if !strings.Contains(g.Reason, "ln L varies by") {
				t.Errorf("star %s: reason %q does not say how its ln L varies", id, g.Reason)
			}
			if strings.HasSuffix(g.Reason, carriedPhrase) {
				carrying++
			}
		}
	}
	t.Logf("%d of %d candidate ejectees recorded as carrying the orbit fit", carrying, candidates)
	if carrying == 0 || carrying != r.HaloMassOrbitsMsun.Stars {
		t.Errorf("%d stars recorded as carrying the orbit fit, the estimate counts %d (want the same, and some)", carrying, r.HaloMassOrbitsMsun.Stars)
	}
}

// The draws can be made again only with the run's own model: a campaign
// whose Solar parameters changed since is refused.
func TestWeighRefusesAnotherModel(t *testing.T) {
	if testing.Short() {
		t.Skip("vets a scenario")
	}
	ctx := context.Background()
	c, ledger, _ := vetScenario(t, scenario.Config{Seed: 9, Stars: 1000})
	text, err := os.ReadFile(c.File)
	if err != nil {
		t.Fatal(err)
	}
	changed := strings.Replace(string(text), "sun_height_pc = 20.8", "sun_height_pc = 25.0", 1)
	if changed == string(text) {
		t.Fatal("the scenario's campaign has no sun_height_pc = 20.8 to change")
	}
	c2, err := campaign.Parse(c.File, []byte(changed), c.Dir)
	if err != nil {
		t.Fatal(err)
	}
	l, err := db.Open(ctx, ledger, db.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	if _, err := Weigh(ctx, l, c2, Options{ToolVersion: "test"}); err == nil || !strings.Contains(err.Error(), "another rule set or model") {
		t.Fatalf("weigh with another model: %v", err)
	}
}
