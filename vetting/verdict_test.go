package vetting

import (
	"math"
	"testing"

	"starvet/campaign"
	"starvet/db"
	"starvet/galaxy/kinematics"
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
		rec := &db.StarRecord{}
		applyPUnbound(rec, &c.r, s)
		if len(rec.Reasons) != 1 {
			t.Fatalf("%d reasons, want 1", len(rec.Reasons))
		}
		got := rec.Reasons[0]
		if got.Threshold != c.threshold || got.Message != c.message || got.Value != c.r.PUnbound {
			t.Errorf("reason %q %q value %v,\nwant %q %q value %v", got.Threshold, got.Message, got.Value, c.threshold, c.message, c.r.PUnbound)
		}
	}
}
