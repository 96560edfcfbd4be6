package vetting

import (
	"context"
	"os"
	"path/filepath"
	"testing"

	"starvet/campaign"
	"starvet/db"
	"starvet/rules"
)

// A real run records the values that decided it: the escape radius and
// thresholds as the campaign set them, the effective potential's
// components and the rule file's text as read; config_hash is the
// fingerprint of those values, not the campaign hash.
func TestRunRecordsSettings(t *testing.T) {
	ctx := context.Background()
	sc := smallScenario(t, 1000, 5)
	c, err := campaign.Load(sc.CampaignPath)
	if err != nil {
		t.Fatal(err)
	}
	ruleText := string(rules.DefaultText()) + "\n# our own copy of the default rules\n"
	rulePath := filepath.Join(sc.Dir, "rules.toml")
	if err := os.WriteFile(rulePath, []byte(ruleText), 0o644); err != nil {
		t.Fatal(err)
	}
	c.Rules = rulePath
	c.Potential.EscapeRadiusKpc = 187.5
	c.Kinematics.UnboundP = 0.85
	ledger := filepath.Join(sc.Dir, "settings.db")
	sum, err := (&Engine{}).Run(ctx, c, RunOptions{LedgerPath: ledger})
	if err != nil {
		t.Fatal(err)
	}

	l, err := db.Open(ctx, ledger, db.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	s, err := l.RunSettings(ctx, sum.RunID)
	if err != nil {
		t.Fatal(err)
	}
	if !s.Recorded() {
		t.Fatal("the run recorded no settings")
	}
	if s.RuleText != ruleText {
		t.Errorf("recorded rule text (%d bytes) is not the rule file (%d bytes)", len(s.RuleText), len(ruleText))
	}
	for name, want := range map[string]float64{
		campaign.SettingEscapeRadiusKpc: 187.5,
		campaign.SettingUnboundP:        0.85,
		campaign.SettingMarginalP:       c.Kinematics.MarginalP,
		campaign.SettingSunDistanceKpc:  c.Galaxy.SunDistanceKpc,
		"galaxy.sun_velocity_v_kms":     c.Galaxy.SunVelocityKms[1],
		campaign.SettingGCRadiusKpc:     c.Kinematics.GCRadiusKpc,
		"kinematics.samples":            float64(c.Kinematics.Samples),
		"match.radius_arcsec":           c.Match.RadiusArcsec,
	} {
		if got, ok := s.Float(name); !ok || got != want {
			t.Errorf("%s recorded as %v (%v), want %v", name, got, ok, want)
		}
	}
	if got, _ := s.Get(campaign.SettingPotentialModel); got != sum.ModelName {
		t.Errorf("potential.model recorded as %q, want %q", got, sum.ModelName)
	}
	if got, _ := s.Get(campaign.SettingRulesFile); got != rulePath {
		t.Errorf("rules.file recorded as %q, want %q", got, rulePath)
	}
	model, _, err := Model(c)
	if err != nil {
		t.Fatal(err)
	}
	cs := model.Components()
	if n, ok := s.Float(campaign.SettingPotentialComponents); !ok || int(n) != len(cs) || len(cs) == 0 {
		t.Fatalf("potential.components recorded as %v (%v), the model has %d", n, ok, len(cs))
	}
	for i, x := range cs {
		kind, _ := s.Get(campaign.ComponentSetting(i+1, "kind"))
		mass, _ := s.Float(campaign.ComponentSetting(i+1, "mass_msun"))
		if kind != x.Kind || mass != x.MassMsun {
			t.Errorf("component %d recorded as %s %v, the model has %s %v", i+1, kind, mass, x.Kind, x.MassMsun)
		}
	}
	r, err := l.Run(ctx, sum.RunID)
	if err != nil {
		t.Fatal(err)
	}
	if r.ConfigHash != s.ConfigHash() || r.ConfigHash == r.CampaignHash {
		t.Errorf("config_hash %s: want the settings' fingerprint %s, not the campaign hash %s", r.ConfigHash, s.ConfigHash(), r.CampaignHash)
	}
}
