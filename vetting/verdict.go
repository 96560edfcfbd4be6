package vetting

import (
	"fmt"
	"math"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/galaxy/orbit"
	"starvet/internal/numfmt"
	"starvet/verdict"
)

// pUnboundStatus is the verdict of a star with a usable radial velocity:
// unbound at or above the campaign's unboundP, marginal at or above
// marginalP, else bound.
func pUnboundStatus(pUnbound, unboundP, marginalP float64) verdict.Status {
	switch {
	case pUnbound >= unboundP:
		return verdict.Unbound
	case pUnbound >= marginalP:
		return verdict.Marginal
	}
	return verdict.Bound
}

// addReason appends a kinematic reason (no severity) to the star's record.
func addReason(rec *db.StarRecord, id, outcome string, value float64, threshold, format string, a ...any) {
	rec.Reasons = append(rec.Reasons, db.ReasonRow{RuleID: id, Outcome: outcome, Severity: "", Value: value,
		Threshold: threshold, Message: fmt.Sprintf(format, a...)})
}

// applyKinematics turns a Monte Carlo result (and a trace, for the fast
// stars) into the star's status and summary columns, and keeps the
// kinematic notes of the Monte Carlo as reasons. The reasons that follow
// from the summary columns (KinematicReasons) are not stored: they are
// written again from the columns whenever a star is shown.
func applyKinematics(rec *db.StarRecord, r *kinematics.Result, t *orbit.TraceResult, s *runSettings) {
	v := &rec.Verdict
	v.DistanceMethod = r.Method
	v.HasRV = r.HasRV
	v.ModelName = s.modelName
	for _, x := range r.Reasons {
		out := "info"
		if x.Fatal {
			out = "fail"
		}
		addReason(rec, "kinematics."+x.Code, out, math.NaN(), "", "%s", x.Message)
	}
	if !r.OK {
		v.Status = string(verdict.Rejected)
		return
	}
	v.SamplesUsed = r.Samples
	v.DistP16Kpc, v.DistP50Kpc, v.DistP84Kpc = r.DistKpc[0], r.DistKpc[1], r.DistKpc[2]
	v.RGCKpc, v.VEscKms = r.RGCKpc[1], r.VEscKms[1]
	if !r.HasRV {
		v.Status = string(verdict.NeedsRV)
		v.SpeedLowerP50Kms, v.PUnboundLower = r.SpeedLowerKms[1], r.PUnboundLower
		return
	}
	v.SpeedP16Kms, v.SpeedP50Kms, v.SpeedP84Kms = r.SpeedKms[0], r.SpeedKms[1], r.SpeedKms[2]
	v.PUnbound, v.PUnboundFlat = r.PUnbound, r.PUnboundFlat
	k := &s.campaign.Kinematics
	v.Status = string(pUnboundStatus(r.PUnbound, k.UnboundP, k.MarginalP))
	if t != nil {
		v.Origin, v.PGCOrigin, v.GCConsistency, v.FlightTimeMyr = string(t.Origin), t.PGCOrigin, t.GCConsistency, t.FlightTimeMyr
		v.TraceSamples, v.TraceCrossed = t.Samples, len(t.Crossings)
		rec.Crossings = make([]db.CrossingRow, len(t.Crossings))
		for i, c := range t.Crossings {
			rec.Crossings[i] = db.CrossingRow{XKpc: c.XKpc, YKpc: c.YKpc, TMyr: c.TMyr}
		}
	}
}

// ReasonThresholds are the settings a star's kinematic reasons quote.
type ReasonThresholds struct {
	UnboundP, MarginalP float64
	VelocityPriorKms    float64 // 0: flat prior
	TraceMyr            float64
	GCRadiusKpc         float64
}

// RecordedThresholds reads ReasonThresholds from a run's recorded
// settings; ok is false when the run recorded none of them.
func RecordedThresholds(rs *db.RunSettings) (t ReasonThresholds, ok bool) {
	for _, x := range []struct {
		name string
		to   *float64
	}{
		{campaign.SettingUnboundP, &t.UnboundP}, {campaign.SettingMarginalP, &t.MarginalP},
		{campaign.SettingVelocityPriorKms, &t.VelocityPriorKms}, {campaign.SettingTraceMyr, &t.TraceMyr},
		{campaign.SettingGCRadiusKpc, &t.GCRadiusKpc},
	} {
		f, found := rs.Float(x.name)
		if !found {
			return t, false
		}
		*x.to = f
	}
	return t, true
}

// KinematicReasons are the reasons that follow from a computed verdict's
// kinematic columns and the run's thresholds: the distance, the speed
// against the escape speed (or the lower bound without a radial velocity)
// and, for a traced star, its origin. They come after the star's stored
// reasons. A verdict without Monte Carlo draws (SamplesUsed 0, which
// includes every verdict written before schema 10, whose reasons were
// stored whole) has none.
func KinematicReasons(v *db.VerdictRow, k ReasonThresholds) []db.ReasonRow {
	if v.SamplesUsed == 0 {
		return nil
	}
	var rec db.StarRecord
	addReason(&rec, "kinematics.distance", "info", v.DistP50Kpc, "", "distance %s kpc (16-50-84%%: %s, %s, %s) from method %q",
		numfmt.Sig(v.DistP50Kpc, 3), numfmt.Sig(v.DistP16Kpc, 3), numfmt.Sig(v.DistP50Kpc, 3), numfmt.Sig(v.DistP84Kpc, 3), v.DistanceMethod)
	if !v.HasRV {
		addReason(&rec, "kinematics.needs-rv", "info", v.SpeedLowerP50Kms, "", "no usable radial velocity: Galactocentric speed at least %s km/s (median over samples), %s of samples already unbound on that bound under model %s",
			numfmt.Kms(v.SpeedLowerP50Kms), numfmt.Prob(v.PUnboundLower), v.ModelName)
		return rec.Reasons
	}
	prior := ""
	if !math.IsNaN(v.PUnboundFlat) {
		prior = ", velocity prior " + numfmt.Exact(k.VelocityPriorKms) + " km/s (flat prior: p_unbound " + numfmt.Prob(v.PUnboundFlat) + ")"
	}
	switch pUnboundStatus(v.PUnbound, k.UnboundP, k.MarginalP) {
	case verdict.Unbound:
		addReason(&rec, "kinematics.p-unbound", "info", v.PUnbound, ">= "+numfmt.Exact(k.UnboundP),
			"p_unbound %s >= %s under model %s%s: speed %s (+%s/-%s) km/s against escape speed %s km/s; a candidate for follow-up, not a discovery",
			numfmt.Prob(v.PUnbound), numfmt.Exact(k.UnboundP), v.ModelName, prior, numfmt.Kms(v.SpeedP50Kms), numfmt.Kms(v.SpeedP84Kms-v.SpeedP50Kms), numfmt.Kms(v.SpeedP50Kms-v.SpeedP16Kms), numfmt.Kms(v.VEscKms))
	case verdict.Marginal:
		addReason(&rec, "kinematics.p-unbound", "info", v.PUnbound, ">= "+numfmt.Exact(k.MarginalP)+" and < "+numfmt.Exact(k.UnboundP),
			"p_unbound %s between %s and %s under model %s%s: speed %s km/s against escape speed %s km/s",
			numfmt.Prob(v.PUnbound), numfmt.Exact(k.MarginalP), numfmt.Exact(k.UnboundP), v.ModelName, prior, numfmt.Kms(v.SpeedP50Kms), numfmt.Kms(v.VEscKms))
	default:
		addReason(&rec, "kinematics.p-unbound", "info", v.PUnbound, "< "+numfmt.Exact(k.MarginalP),
			"p_unbound %s < %s under model %s%s: speed %s km/s against escape speed %s km/s",
			numfmt.Prob(v.PUnbound), numfmt.Exact(k.MarginalP), v.ModelName, prior, numfmt.Kms(v.SpeedP50Kms), numfmt.Kms(v.VEscKms))
	}
	if v.TraceSamples > 0 {
		addReason(&rec, "kinematics.origin", "info", v.GCConsistency, "<= "+numfmt.Exact(orbit.GCConsistencyLevel),
			"origin %s: the centre lies at containment level %s of the plane crossings (%d of %d samples crossed within %s Myr; %s within %s kpc of the centre; flight time %s Myr)",
			v.Origin, numfmt.Prob(v.GCConsistency), v.TraceCrossed, v.TraceSamples, numfmt.Exact(k.TraceMyr), numfmt.Prob(v.PGCOrigin), numfmt.Exact(k.GCRadiusKpc), numfmt.Myr(v.FlightTimeMyr))
	}
	return rec.Reasons
}

// withdrawnRecord is the record of a star of the previous complete run
// (prevRunID, where its status was was) absent from the primary catalog
// now.
func withdrawnRecord(id string, cats *Catalogs, prevRunID int64, was string) db.StarRecord {
	return WithdrawnRecord(id, cats.Primary.Name, cats.Primary.Release, prevRunID, was)
}

// WithdrawnRecord is the record of star id, absent now from the primary
// catalog name (release), whose status in the previous complete run
// prevRunID was was.
func WithdrawnRecord(id, name, release string, prevRunID int64, was string) db.StarRecord {
	return db.StarRecord{StarID: id,
		Verdict: db.NewVerdictRow(string(verdict.Withdrawn)),
		Reasons: []db.ReasonRow{{RuleID: string(verdict.Withdrawn), Outcome: "info", Value: math.NaN(),
			Message: fmt.Sprintf("absent from the primary catalog %s (release %s); status in run %d was %s",
				name, release, prevRunID, was)}}}
}
