package vetting

import (
	"fmt"
	"math"

	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/galaxy/orbit"
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
// stars) into the star's status, summary columns and kinematic reasons.
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
	addReason(rec, "kinematics.distance", "info", r.DistKpc[1], "", "distance %.3g kpc (16-50-84%%: %.3g, %.3g, %.3g) from method %q",
		r.DistKpc[1], r.DistKpc[0], r.DistKpc[1], r.DistKpc[2], r.Method)
	v.RGCKpc, v.VEscKms = r.RGCKpc[1], r.VEscKms[1]
	if !r.HasRV {
		v.Status = string(verdict.NeedsRV)
		v.SpeedLowerP50Kms, v.PUnboundLower = r.SpeedLowerKms[1], r.PUnboundLower
		addReason(rec, "kinematics.needs-rv", "info", r.SpeedLowerKms[1], "", "no usable radial velocity: Galactocentric speed at least %.0f km/s (median over samples), %.2f of samples already unbound on that bound under model %s",
			r.SpeedLowerKms[1], r.PUnboundLower, s.modelName)
		return
	}
	v.SpeedP16Kms, v.SpeedP50Kms, v.SpeedP84Kms = r.SpeedKms[0], r.SpeedKms[1], r.SpeedKms[2]
	v.PUnbound = r.PUnbound
	applyPUnbound(rec, r, s)
	if t != nil {
		applyTrace(rec, t, s)
	}
}

// applyPUnbound gives a star with a usable radial velocity its status from
// p_unbound and the campaign's thresholds, and says why.
func applyPUnbound(rec *db.StarRecord, r *kinematics.Result, s *runSettings) {
	k := &s.campaign.Kinematics
	prior := ""
	if !math.IsNaN(r.PUnboundFlat) {
		prior = fmt.Sprintf(", velocity prior %g km/s (flat prior: p_unbound %.3f)", k.VelocityPriorKms, r.PUnboundFlat)
	}
	st := pUnboundStatus(r.PUnbound, k.UnboundP, k.MarginalP)
	rec.Verdict.Status = string(st)
	switch st {
	case verdict.Unbound:
		addReason(rec, "kinematics.p-unbound", "info", r.PUnbound, fmt.Sprintf(">= %g", k.UnboundP),
			"p_unbound %.3f >= %g under model %s%s: speed %.0f (+%.0f/-%.0f) km/s against escape speed %.0f km/s; a candidate for follow-up, not a discovery",
			r.PUnbound, k.UnboundP, s.modelName, prior, r.SpeedKms[1], r.SpeedKms[2]-r.SpeedKms[1], r.SpeedKms[1]-r.SpeedKms[0], r.VEscKms[1])
	case verdict.Marginal:
		addReason(rec, "kinematics.p-unbound", "info", r.PUnbound, fmt.Sprintf(">= %g and < %g", k.MarginalP, k.UnboundP),
			"p_unbound %.3f between %g and %g under model %s%s: speed %.0f km/s against escape speed %.0f km/s",
			r.PUnbound, k.MarginalP, k.UnboundP, s.modelName, prior, r.SpeedKms[1], r.VEscKms[1])
	default:
		addReason(rec, "kinematics.p-unbound", "info", r.PUnbound, fmt.Sprintf("< %g", k.MarginalP),
			"p_unbound %.3f < %g under model %s%s: speed %.0f km/s against escape speed %.0f km/s",
			r.PUnbound, k.MarginalP, s.modelName, prior, r.SpeedKms[1], r.VEscKms[1])
	}
}

// applyTrace records a fast star's back-trace: origin, plane crossings and
// the centre's containment level against orbit.GCConsistencyLevel.
func applyTrace(rec *db.StarRecord, t *orbit.TraceResult, s *runSettings) {
	k := &s.campaign.Kinematics
	v := &rec.Verdict
	v.Origin, v.PGCOrigin, v.GCConsistency, v.FlightTimeMyr = string(t.Origin), t.PGCOrigin, t.GCConsistency, t.FlightTimeMyr
	rec.Crossings = make([]db.CrossingRow, len(t.Crossings))
	for i, c := range t.Crossings {
		rec.Crossings[i] = db.CrossingRow{XKpc: c.XKpc, YKpc: c.YKpc, TMyr: c.TMyr}
	}
	addReason(rec, "kinematics.origin", "info", t.GCConsistency, fmt.Sprintf("<= %g", orbit.GCConsistencyLevel),
		"origin %s: the centre lies at containment level %.3f of the plane crossings (%d of %d samples crossed within %g Myr; %.2f within %g kpc of the centre; flight time %.0f Myr)",
		t.Origin, t.GCConsistency, len(t.Crossings), t.Samples, k.TraceMyr, t.PGCOrigin, k.GCRadiusKpc, t.FlightTimeMyr)
}

// withdrawnRecord is the record of a star of the previous complete run
// (prevRunID, where its status was was) absent from the primary catalog
// now.
func withdrawnRecord(id string, cats *Catalogs, prevRunID int64, was string) db.StarRecord {
	return db.StarRecord{StarID: id,
		Verdict: db.NewVerdictRow(string(verdict.Withdrawn)),
		Reasons: []db.ReasonRow{{RuleID: string(verdict.Withdrawn), Outcome: "info", Value: math.NaN(),
			Message: fmt.Sprintf("absent from the primary catalog %s (release %s); status in run %d was %s",
				cats.Primary.Name, cats.Primary.Release, prevRunID, was)}}}
}
