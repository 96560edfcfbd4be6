package vetting

import (
	"math"
	"slices"

	"starvet/catalog"
	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/quality"
	"starvet/rules"
)

// KinematicInput is the kinematic input a run gave a star it computed: the
// star's stored inputs with the fields blanked that the rules it failed
// (failed: rule ids) declare void, as compute does. With the run's
// kinematic settings, kinematics.Evaluate then draws exactly the run's
// Monte Carlo draws again: they come from the star's own stream (seed and
// star id), so none need storing.
func KinematicInput(id string, in *db.InputRow, failed []string, rs *rules.RuleSet) kinematics.Star {
	s := quality.Star{ID: id, DupCount: in.DupCount}
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		s.Values[f] = in.Values[f-1]
	}
	for _, r := range rs.Rules {
		if !slices.Contains(failed, r.ID) {
			continue
		}
		for _, f := range r.Voids {
			s.Values[f] = math.NaN()
		}
	}
	return kinStar(&s)
}
