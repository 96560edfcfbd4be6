package vetting

import (
	"fmt"
	"math"

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
	addReason(rec, "kinematics.distance", "info", r.DistKpc[1], "", "distance %s kpc (16-50-84%%: %s, %s, %s) from method %q",
		numfmt.Sig(r.DistKpc[1], 3), numfmt.Sig(r.DistKpc[0], 3), numfmt.Sig(r.DistKpc[1], 3), numfmt.Sig(r.DistKpc[2], 3), r.Method)
	v.RGCKpc, v.VEscKms = r.RGCKpc[1], r.VEscKms[1]
	if !r.HasRV {
		v.Status = string(verdict.NeedsRV)
		v.SpeedLowerP50Kms, v.PUnboundLower = r.SpeedLowerKms[1], r.PUnboundLower
		addReason(rec, "kinematics.needs-rv", "info", r.SpeedLowerKms[1], "", "no usable radial velocity: Galactocentric speed at least %s km/s (median over samples), %s of samples already unbound on that bound under model %s",
			numfmt.Kms(r.SpeedLowerKms[1]), numfmt.Prob(r.PUnboundLower), s.modelName)
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
		prior = ", velocity prior " + numfmt.Exact(k.VelocityPriorKms) + " km/s (flat prior: p_unbound " + numfmt.Prob(r.PUnboundFlat) + ")"
	}
	st := pUnboundStatus(r.PUnbound, k.UnboundP, k.MarginalP)
	rec.Verdict.Status = string(st)
	switch st {
	case verdict.Unbound:
		addReason(rec, "kinematics.p-unbound", "info", r.PUnbound, ">= "+numfmt.Exact(k.UnboundP),
			"p_unbound %s >= %s under model %s%s: speed %s (+%s/-%s) km/s against escape speed %s km/s; a candidate for follow-up, not a discovery",
			numfmt.Prob(r.PUnbound), numfmt.Exact(k.UnboundP), s.modelName, prior, numfmt.Kms(r.SpeedKms[1]), numfmt.Kms(r.SpeedKms[2]-r.SpeedKms[1]), numfmt.Kms(r.SpeedKms[1]-r.SpeedKms[0]), numfmt.Kms(r.VEscKms[1]))
	case verdict.Marginal:
		addReason(rec, "kinematics.p-unbound", "info", r.PUnbound, ">= "+numfmt.Exact(k.MarginalP)+" and < "+numfmt.Exact(k.UnboundP),
			"p_unbound %s between %s and %s under model %s%s: speed %s km/s against escape speed %s km/s",
			numfmt.Prob(r.PUnbound), numfmt.Exact(k.MarginalP), numfmt.Exact(k.UnboundP), s.modelName, prior, numfmt.Kms(r.SpeedKms[1]), numfmt.Kms(r.VEscKms[1]))
	default:
		addReason(rec, "kinematics.p-unbound", "info", r.PUnbound, "< "+numfmt.Exact(k.MarginalP),
			"p_unbound %s < %s under model %s%s: speed %s km/s against escape speed %s km/s",
			numfmt.Prob(r.PUnbound), numfmt.Exact(k.MarginalP), s.modelName, prior, numfmt.Kms(r.SpeedKms[1]), numfmt.Kms(r.VEscKms[1]))
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
	addReason(rec, "kinematics.origin", "info", t.GCConsistency, "<= "+numfmt.Exact(orbit.GCConsistencyLevel),
		"origin %s: the centre lies at containment level %s of the plane crossings (%d of %d samples crossed within %s Myr; %s within %s kpc of the centre; flight time %s Myr)",
		t.Origin, numfmt.Prob(t.GCConsistency), len(t.Crossings), t.Samples, numfmt.Exact(k.TraceMyr), numfmt.Prob(t.PGCOrigin), numfmt.Exact(k.GCRadiusKpc), numfmt.Myr(t.FlightTimeMyr))
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
