package vetting

import (
	"strconv"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/potential"
	"starvet/rules"
)

// recordedSettings returns what the ledger records of a run's settings:
// the campaign's values, the effective potential (its components too, for
// a built-in model) and where the rule set came from, and the text of the
// rule file rs was compiled from.
func recordedSettings(c *campaign.Campaign, rs *rules.RuleSet, model *potential.Model, modelName string) db.RunSettings {
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
	return db.RunSettings{Values: vs, RuleText: rs.Text}
}
