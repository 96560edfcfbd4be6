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
// every campaign value that decides its results (the effective potential's
// components too, for a built-in model) and the text of the rule file rs
// was loaded from.
func recordedSettings(c *campaign.Campaign, rs *rules.RuleSet, model *potential.Model, modelName string) (db.RunSettings, error) {
	text, err := ruleText(rs)
	if err != nil {
		return db.RunSettings{}, err
	}
	f := db.FloatSetting
	k, g := c.Kinematics, c.Galaxy
	vs := []db.Setting{
		{Name: db.SettingSeed, Value: strconv.FormatInt(c.Seed, 10)},
		f(db.SettingParallaxZeroPointMas, c.ParallaxZeroPointMas),
		{Name: db.SettingRulesFile, Value: rs.File},
		f(db.SettingMatchRadiusArcsec, c.Match.RadiusArcsec),
		f(db.SettingMatchNSigma, c.Match.NSigma),
		f(db.SettingMatchRadiusFloorArcsec, c.Match.RadiusFloorArcsec),
		f(db.SettingMatchDuplicateRadius, c.Match.DuplicateRadiusArcsec),
		f(db.SettingMatchAmbiguityRatio, c.Match.AmbiguityRatio),
		f(db.SettingSunDistanceKpc, g.SunDistanceKpc),
		f(db.SettingSunHeightPc, g.SunHeightPc),
		f(db.SettingSunVelocityUKms, g.SunVelocityKms[0]),
		f(db.SettingSunVelocityVKms, g.SunVelocityKms[1]),
		f(db.SettingSunVelocityWKms, g.SunVelocityKms[2]),
		{Name: db.SettingPotentialModel, Value: modelName},
		f(db.SettingEscapeRadiusKpc, c.Potential.EscapeRadiusKpc),
		{Name: db.SettingDistanceMethod, Value: k.Distance},
		f(db.SettingEDSDLengthKpc, k.EDSDLengthKpc),
		f(db.SettingMinParallaxSignificance, k.MinParallaxSignificance),
		{Name: db.SettingSamples, Value: strconv.Itoa(k.Samples)},
		f(db.SettingVelocityPriorKms, k.VelocityPriorKms),
		f(db.SettingUnboundP, k.UnboundP),
		f(db.SettingMarginalP, k.MarginalP),
		f(db.SettingTraceMinP, k.TraceMinP),
		{Name: db.SettingTraceSamples, Value: strconv.Itoa(k.TraceSamples)},
		f(db.SettingTraceMyr, k.TraceMyr),
		f(db.SettingGCRadiusKpc, k.GCRadiusKpc),
		f(db.SettingDiskRadiusKpc, k.DiskRadiusKpc),
	}
	cs := model.Components()
	vs = append(vs, db.Setting{Name: db.SettingPotentialComponents, Value: strconv.Itoa(len(cs))})
	for i, x := range cs {
		n := i + 1
		vs = append(vs, db.Setting{Name: db.ComponentSetting(n, "kind"), Value: x.Kind},
			f(db.ComponentSetting(n, "mass_msun"), x.MassMsun),
			f(db.ComponentSetting(n, "scale_kpc"), x.ScaleKpc),
			f(db.ComponentSetting(n, "a_kpc"), x.AKpc),
			f(db.ComponentSetting(n, "b_kpc"), x.BKpc))
	}
	for _, cat := range c.Catalogs {
		vs = append(vs, f(db.CatalogSetting(cat.Name, "position_err_mas"), cat.PositionErrMas))
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
