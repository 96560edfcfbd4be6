package vetting

import (
	"math"
	"testing"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/kinematics"
	"starvet/galaxy/orbit"
)

// The p_unbound reason prints its numbers as why and the report do:
// probabilities with numfmt.ProbDigits, speeds in whole km/s, thresholds
// exactly; the value column keeps full precision.
func TestPUnboundReasonText(t *testing.T) {
	s := &runSettings{campaign: &campaign.Campaign{Kinematics: campaign.Kinematics{UnboundP: 0.9, MarginalP: 0.5, VelocityPriorKms: 250}},
		modelName: "invented-model"}
	for _, c := range []struct {
		r                  kinematics.Result
		threshold, message string
	}{
		{kinematics.Result{PUnbound: 0.99012345, PUnboundFlat: math.NaN(), SpeedKms: [3]float64{801.4, 912.62, 1003.3}, VEscKms: [3]float64{0, 512.49, 0}},
			">= 0.9", "p_unbound 0.99 >= 0.9 under model invented-model: speed 913 (+91/-111) km/s against escape speed 512 km/s; a candidate for follow-up, not a discovery"},
		{kinematics.Result{PUnbound: 0.6125, PUnboundFlat: 0.70004, SpeedKms: [3]float64{0, 540.5, 0}, VEscKms: [3]float64{0, 530, 0}},
			">= 0.5 and < 0.9", "p_unbound 0.613 between 0.5 and 0.9 under model invented-model, velocity prior 250 km/s (flat prior: p_unbound 0.7): speed 540 km/s against escape speed 530 km/s"},
		{kinematics.Result{PUnbound: 3.403605097820214e-07, PUnboundFlat: math.NaN(), SpeedKms: [3]float64{0, 300.2, 0}, VEscKms: [3]float64{0, 530, 0}},
			"< 0.5", "p_unbound 3.4e-07 < 0.5 under model invented-model: speed 300 km/s against escape speed 530 km/s"},
	} {
		c.r.OK, c.r.HasRV, c.r.Samples, c.r.DistKpc = true, true, 1000, [3]float64{1, 2, 3}
		rec := &db.StarRecord{Verdict: db.NewVerdictRow("")}
		applyKinematics(rec, &c.r, nil, s)
		if len(rec.Reasons) != 0 {
			t.Fatalf("%d reasons stored, want none (they follow from the verdict's columns)", len(rec.Reasons))
		}
		k := s.campaign.Kinematics
		shown := KinematicReasons(&rec.Verdict, ReasonThresholds{UnboundP: k.UnboundP, MarginalP: k.MarginalP, VelocityPriorKms: k.VelocityPriorKms})
		if len(shown) != 2 || shown[1].RuleID != "kinematics.p-unbound" {
			t.Fatalf("shown reasons %+v, want distance and p-unbound", shown)
		}
		got := shown[1]
		if got.Threshold != c.threshold || got.Message != c.message || got.Value != c.r.PUnbound {
			t.Errorf("reason %q %q value %v,\nwant %q %q value %v", got.Threshold, got.Message, got.Value, c.threshold, c.message, c.r.PUnbound)
		}
	}
}

// What the ledger stores of a star's Monte Carlo and trace is enough to
// write the kinematic reasons exactly as the engine stored them before
// schema 10. The expected rows are what that engine (commit 79a0659)
// wrote for these results, captured from its applyKinematics.
func TestKinematicReasonsAsStoredBefore(t *testing.T) {
	nan := math.NaN()
	c := &campaign.Campaign{Kinematics: campaign.Kinematics{UnboundP: 0.8, MarginalP: 0.5, TraceMyr: 300, GCRadiusKpc: 1}}
	s := &runSettings{campaign: c, modelName: "toy-model"}
	type row struct {
		rule      string
		value     float64
		threshold string
		message   string
	}
	for i, tc := range []struct {
		r    kinematics.Result
		tr   *orbit.TraceResult
		vp   float64
		want []row
	}{
		{r: kinematics.Result{Method: "inverse", HasRV: true, SpeedKms: [3]float64{130.19, 131.57, 132.99}, PUnbound: 0, PUnboundFlat: nan,
			RGCKpc: [3]float64{nan, 8.64, nan}, VEscKms: [3]float64{nan, 503.62, nan}, DistKpc: [3]float64{4.0012, 4.69022622346375, 5.6811}},
			want: []row{
				{"kinematics.distance", 4.69022622346375, "", `distance 4.69 kpc (16-50-84%: 4, 4.69, 5.68) from method "inverse"`},
				{"kinematics.p-unbound", 0, "< 0.5", "p_unbound 0 < 0.5 under model toy-model: speed 132 km/s against escape speed 504 km/s"},
			}},
		{r: kinematics.Result{Method: "edsd", HasRV: true, SpeedKms: [3]float64{400.2, 452.7, 510.1}, PUnbound: 0.634, PUnboundFlat: 0.702,
			RGCKpc: [3]float64{nan, 12.3, nan}, VEscKms: [3]float64{nan, 455.5, nan}, DistKpc: [3]float64{10.1, 12.25, 15.3}}, vp: 150,
			want: []row{
				{"kinematics.distance", 12.25, "", `distance 12.2 kpc (16-50-84%: 10.1, 12.2, 15.3) from method "edsd"`},
				{"kinematics.p-unbound", 0.634, ">= 0.5 and < 0.8", "p_unbound 0.634 between 0.5 and 0.8 under model toy-model, velocity prior 150 km/s (flat prior: p_unbound 0.702): speed 453 km/s against escape speed 456 km/s"},
			}},
		{r: kinematics.Result{Method: "catalog", HasRV: true, SpeedKms: [3]float64{1179.4, 1184.2, 1189.6}, PUnbound: 1, PUnboundFlat: 1,
			RGCKpc: [3]float64{nan, 20.3, nan}, VEscKms: [3]float64{nan, 384.2, nan}, DistKpc: [3]float64{19.5, 20.01, 21.7}}, vp: 150,
			tr: &orbit.TraceResult{Samples: 200, Crossings: make([]orbit.Crossing, 187), PGCOrigin: 0.125, GCConsistency: 0.748141921178502, Origin: "galactic-centre", FlightTimeMyr: 25.04},
			want: []row{
				{"kinematics.distance", 20.01, "", `distance 20 kpc (16-50-84%: 19.5, 20, 21.7) from method "catalog"`},
				{"kinematics.p-unbound", 1, ">= 0.8", "p_unbound 1 >= 0.8 under model toy-model, velocity prior 150 km/s (flat prior: p_unbound 1): speed 1184 (+5/-5) km/s against escape speed 384 km/s; a candidate for follow-up, not a discovery"},
				{"kinematics.origin", 0.748141921178502, "<= 0.95", "origin galactic-centre: the centre lies at containment level 0.748 of the plane crossings (187 of 200 samples crossed within 300 Myr; 0.125 within 1 kpc of the centre; flight time 25.0 Myr)"},
			}},
		{r: kinematics.Result{Method: "inverse", SpeedLowerKms: [3]float64{70, 83.4901368478033, 99}, PUnboundLower: 0,
			RGCKpc: [3]float64{nan, 7.9, nan}, VEscKms: [3]float64{nan, 520.1, nan}, DistKpc: [3]float64{0.91, 1.0234, 1.2}},
			want: []row{
				{"kinematics.distance", 1.0234, "", `distance 1.02 kpc (16-50-84%: 0.91, 1.02, 1.2) from method "inverse"`},
				{"kinematics.needs-rv", 83.4901368478033, "", "no usable radial velocity: Galactocentric speed at least 83 km/s (median over samples), 0 of samples already unbound on that bound under model toy-model"},
			}},
		{r: kinematics.Result{Method: "inverse", SpeedLowerKms: [3]float64{470, 583.49, 699}, PUnboundLower: 0.0345,
			RGCKpc: [3]float64{nan, 7.9, nan}, VEscKms: [3]float64{nan, 520.1, nan}, DistKpc: [3]float64{0.91, 1.0234, 1.2}},
			want: []row{
				{"kinematics.distance", 1.0234, "", `distance 1.02 kpc (16-50-84%: 0.91, 1.02, 1.2) from method "inverse"`},
				{"kinematics.needs-rv", 583.49, "", "no usable radial velocity: Galactocentric speed at least 583 km/s (median over samples), 0.0345 of samples already unbound on that bound under model toy-model"},
			}},
	} {
		c.Kinematics.VelocityPriorKms = tc.vp
		tc.r.OK, tc.r.Samples = true, 1000
		rec := &db.StarRecord{Verdict: db.NewVerdictRow("")}
		applyKinematics(rec, &tc.r, tc.tr, s)
		got := KinematicReasons(&rec.Verdict, ReasonThresholds{UnboundP: 0.8, MarginalP: 0.5, VelocityPriorKms: tc.vp, TraceMyr: 300, GCRadiusKpc: 1})
		if len(got) != len(tc.want) {
			t.Fatalf("case %d: %d reasons %+v, want %d", i, len(got), got, len(tc.want))
		}
		for j, w := range tc.want {
			g := got[j]
			if g.RuleID != w.rule || g.Outcome != "info" || g.Severity != "" || g.Value != w.value || g.Threshold != w.threshold || g.Message != w.message {
				t.Errorf("case %d reason %d:\n got %q %q %v %q %q\nwant %q info %v %q %q", i, j, g.RuleID, g.Outcome, g.Value, g.Threshold, g.Message, w.rule, w.value, w.threshold, w.message)
			}
		}
	}
}
