package vetting

import (
	"fmt"
	"path/filepath"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/galaxy/orbit"
	"starvet/galaxy/potential"
	"starvet/rules"
)

// runSettings is everything a run reads from its campaign and options,
// built once by newRunSettings and handed to the later steps.
type runSettings struct {
	campaign   *campaign.Campaign
	opt        RunOptions
	ledgerPath string // the options' ledger, else the campaign's
	rejectDir  string // where ingest writes the rejected-row files: beside the ledger
	rules      *rules.RuleSet
	model      *potential.Model
	modelName  string
	// modelHash fingerprints the campaign's model settings and the model
	// itself: a change recomputes every star.
	modelHash string
	kin       kinematics.Settings
	trace     orbit.TraceSettings
	// record is what the ledger stores of these settings, by value.
	record db.RunSettings
}

// newRunSettings loads the rule set and the model and maps the campaign
// onto the Monte Carlo and trace settings, checking them.
func newRunSettings(c *campaign.Campaign, opt RunOptions) (*runSettings, error) {
	s := &runSettings{campaign: c, opt: opt, ledgerPath: opt.LedgerPath}
	if s.ledgerPath == "" {
		s.ledgerPath = c.Ledger
	}
	s.rejectDir = filepath.Dir(s.ledgerPath)
	var err error
	if s.rules, err = LoadRules(c, opt.RulesOverride); err != nil {
		return nil, err
	}
	if s.model, s.modelName, err = Model(c); err != nil {
		return nil, err
	}
	s.kin = KinematicSettings(c)
	if err := s.kin.Validate(); err != nil {
		return nil, fmt.Errorf("campaign %s: [kinematics]: %w", c.File, err)
	}
	s.modelHash = c.ModelHash() + ":" + s.model.Fingerprint()
	s.record = recordedSettings(c, s.rules, s.model, s.modelName)
	k := c.Kinematics
	s.trace = orbit.TraceSettings{TraceMyr: k.TraceMyr, GCRadiusKpc: k.GCRadiusKpc, DiskRadiusKpc: k.DiskRadiusKpc}
	return s, nil
}

// Model returns the campaign's Galactic potential: its own components when
// it lists any, else the named (or default) built-in model.
func Model(c *campaign.Campaign) (*potential.Model, string, error) {
	if len(c.Potential.Components) > 0 {
		cs := make([]potential.Component, len(c.Potential.Components))
		for i, x := range c.Potential.Components {
			cs[i] = potential.Component{Kind: x.Kind, MassMsun: x.MassMsun, ScaleKpc: x.ScaleKpc, AKpc: x.AKpc, BKpc: x.BKpc}
		}
		m, err := potential.New(cs)
		if err != nil {
			return nil, "", fmt.Errorf("campaign %s: [potential]: %w", c.File, err)
		}
		return m, campaign.ComponentsModel, nil
	}
	name := c.Potential.Model
	if name == "" {
		name = potential.DefaultModel
	}
	m, err := potential.Builtin(name)
	if err != nil {
		return nil, "", fmt.Errorf("campaign %s: [potential]: %w", c.File, err)
	}
	return m, name, nil
}

// KinematicSettings maps the campaign onto the Monte Carlo settings.
func KinematicSettings(c *campaign.Campaign) kinematics.Settings {
	k := c.Kinematics
	return kinematics.Settings{
		Distance:                k.Distance,
		EDSDLengthKpc:           k.EDSDLengthKpc,
		MinParallaxSignificance: k.MinParallaxSignificance,
		ParallaxZeroPointMas:    c.ParallaxZeroPointMas,
		Samples:                 k.Samples,
		Seed:                    uint64(c.Seed),
		Sun:                     c.Galaxy.Sun(),
		EscapeRadiusKpc:         c.Potential.EscapeRadiusKpc,
		KeepSamples:             k.TraceSamples,
		VelocityPriorKms:        k.VelocityPriorKms,
		// A star may stop only where neither its status nor its trace
		// could change: below both thresholds that p_unbound decides.
		StopBelowP:      stopBelowP(k),
		StopSigma:       k.StopSigma,
		TailEscFraction: k.StopTailVEscFraction,
	}
}

// stopBelowP is the p_unbound below which a star's Monte Carlo may end
// early: the lower of marginal_p and trace_min_p, or 0 (never) when the
// campaign turned early stopping off.
func stopBelowP(k campaign.Kinematics) float64 {
	if k.StopSigma == 0 {
		return 0
	}
	return min(k.MarginalP, k.TraceMinP)
}
