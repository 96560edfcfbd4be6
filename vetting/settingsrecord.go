package vetting

import (
	"fmt"
	"os"
	"strconv"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/potential"
	"starvet/rules"
)

// recordedSettings returns what the ledger records of a run's settings:
// the campaign's values, the effective potential (its components too, for
// a built-in model) and where the rule set came from, and the text of the
// rule file rs was loaded from.
func recordedSettings(c *campaign.Campaign, rs *rules.RuleSet, model *potential.Model, modelName string) (db.RunSettings, error) {
	text, err := ruleText(rs)
	if err != nil {
		return db.RunSettings{}, err
	}
	var vs []db.Setting
	for _, v := range c.Values() {
		vs = append(vs, db.Setting(v))
	}
	f := db.FloatSetting
	cs := model.Components()
	vs = append(vs, db.Setting{Name: campaign.SettingRulesFile, Value: rs.File},
		db.Setting{Name: campaign.SettingPotentialModel, Value: modelName},
		db.Setting{Name: campaign.SettingPotentialComponents, Value: strconv.Itoa(len(cs))})
	for i, x := range cs {
		n := i + 1
		vs = append(vs, db.Setting{Name: campaign.ComponentSetting(n, "kind"), Value: x.Kind},
			f(campaign.ComponentSetting(n, "mass_msun"), x.MassMsun),
			f(campaign.ComponentSetting(n, "scale_kpc"), x.ScaleKpc),
			f(campaign.ComponentSetting(n, "a_kpc"), x.AKpc),
			f(campaign.ComponentSetting(n, "b_kpc"), x.BKpc))
	}
	return db.RunSettings{Values: vs, RuleText: text}, nil
}

// ruleText is the text rs was compiled from: the embedded default, or the
// user's file read again. A file edited since it was loaded is refused, so
// the recorded text is the one the run applies.
func ruleText(rs *rules.RuleSet) (string, error) {
	if rs.File == rules.DefaultFile {
		return string(rules.DefaultText()), nil
	}
	data, err := os.ReadFile(rs.File)
	if err != nil {
		return "", fmt.Errorf("rule file %s: read for the ledger: %w", rs.File, err)
	}
	again, err := rules.Parse(rs.File, data, rules.Schema{Catalogs: rs.Catalogs})
	if err != nil || again.Fingerprint != rs.Fingerprint {
		return "", fmt.Errorf("rule file %s changed while the run started; run again", rs.File)
	}
	return string(data), nil
}
