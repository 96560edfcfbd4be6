package scenario

import (
	"math"
	"math/rand/v2"
	"testing"

	"starvet/galaxy/frames"
)

// TestSpeedMargin checks the first-order margin against a brute-force Monte
// Carlo of the same error model (independent normal errors in distance,
// both proper motions and rv, pushed through the exact transform): for
// stars with adequate data the two sigmas agree to 15% when the distance error
// is at most 10%, where first order is a good approximation (the
// delta method, e.g. Casella & Berger 2002, Statistical Inference, 2nd ed.,
// section 5.5.4).
func TestSpeedMargin(t *testing.T) {
	s, _ := generate(t, 11)
	rng := rand.New(rand.NewPCG(3, 4))
	checked := 0
	for i, st := range s.stars {
		r := s.Truth[i]
		if !r.AdequateData || math.IsNaN(r.MarginSigma) {
			continue
		}
		a, sp := st.astro, st.spec
		fracD := math.Ln10 / 5 * sp.distModErr
		if a.plxMas/a.plxErrMas >= 5 {
			fracD = a.plxErrMas / a.plxMas
		}
		if fracD > 0.10 {
			continue
		}
		b := frames.NewBasis(st.raDeg*math.Pi/180, st.decDeg*math.Pi/180)
		const n = 4000
		var sum, sum2 float64
		for range n {
			d := st.distKpc * (1 + fracD*rng.NormFloat64())
			pos, vel := s.galaxy.sun.ToGalactocentric(b, d, st.pmRA+a.pmRAErr*rng.NormFloat64(),
				st.pmDec+a.pmDecErr*rng.NormFloat64(), st.rvKms+sp.rvErrKms*rng.NormFloat64())
			x := speed(vel) - s.galaxy.vesc(pos)
			sum += x
			sum2 += x * x
		}
		mean := sum / n
		sigMC := math.Sqrt(sum2/n - mean*mean)
		sigLin := (r.VGCTrueKms - r.VEscTrueKms) / r.MarginSigma
		if math.Abs(sigLin/sigMC-1) > 0.15 {
			t.Errorf("%s (%s): linear sigma %.2f km/s, Monte Carlo %.2f km/s", st.id, st.pop, sigLin, sigMC)
		}
		if r.Decidable != (r.TrulyUnbound && r.MarginSigma >= DecidableSigma) {
			t.Errorf("%s: decidable %v with margin %.2f, unbound %v", st.id, r.Decidable, r.MarginSigma, r.TrulyUnbound)
		}
		checked++
	}
	if checked < 10 {
		t.Fatalf("only %d stars checked", checked)
	}
	t.Logf("%d stars checked", checked)
}
