package kinematics

import (
	"math"
	"math/rand/v2"
	"testing"

	"starvet/internal/vec"
)

// TestPriorResampleConjugate checks the reweighting against the conjugate
// normal: draws x ~ N(m, s^2) weighted by a N(0, sigma^2) prior give the
// posterior N(m k, s^2 k), k = sigma^2/(sigma^2+s^2) (Gelman et al. 2013,
// Bayesian Data Analysis, 3rd ed., eq. 2.12). Tolerances are five standard
// errors at the effective sample size.
func TestPriorResampleConjugate(t *testing.T) {
	const n = 200000
	for _, c := range []struct{ m, s, sigma float64 }{
		{550, 230, 150}, // a noisy tangential velocity at large distance
		{300, 20, 150},  // precise data: the mean moves by s^2/sigma^2 of itself
		{0, 100, 100},
	} {
		rng := rand.New(rand.NewPCG(1, 2))
		x := make([]float64, n)
		x2 := make([]float64, n)
		ub := make([]bool, n)
		for i := range x {
			x[i] = c.m + c.s*rng.NormFloat64()
			x2[i] = x[i] * x[i]
			ub[i] = x2[i] > c.m*c.m
		}
		wt, idx := make([]float64, n), make([]int, n)
		pu, ess := priorResample(x2, ub, c.sigma, rng.Float64(), wt, idx)
		gather(x, make([]float64, n), idx)
		var sum, sum2 float64
		for _, v := range x {
			sum += v
			sum2 += v * v
		}
		k := c.sigma * c.sigma / (c.sigma*c.sigma + c.s*c.s)
		wantMean, wantSD := c.m*k, c.s*math.Sqrt(k)
		mean := sum / n
		sd := math.Sqrt(sum2/n - mean*mean)
		if se := wantSD / math.Sqrt(ess); math.Abs(mean-wantMean) > 5*se {
			t.Errorf("m=%v s=%v sigma=%v: mean %.2f, want %.2f (+- %.2f)", c.m, c.s, c.sigma, mean, wantMean, se)
		}
		if math.Abs(sd/wantSD-1) > 5/math.Sqrt(2*ess) {
			t.Errorf("m=%v s=%v sigma=%v: sd %.2f, want %.2f", c.m, c.s, c.sigma, sd, wantSD)
		}
		// The weighted share of |x| > |m|, against the posterior normal
		// (both tails).
		phi := func(z float64) float64 { return 0.5 * math.Erfc(-z/math.Sqrt2) }
		am := math.Abs(c.m)
		wantPU := 1 - phi((am-wantMean)/wantSD) + phi((-am-wantMean)/wantSD)
		if math.Abs(pu-wantPU) > 5*math.Sqrt(wantPU*(1-wantPU)/ess) {
			t.Errorf("m=%v s=%v sigma=%v: weighted share %.4f, want %.4f", c.m, c.s, c.sigma, pu, wantPU)
		}
		for i := 1; i < n; i++ {
			if idx[i] < idx[i-1] {
				t.Fatalf("resample indices decrease at %d", i)
			}
		}
	}
}

// TestVelocityPriorInEvaluate: a precise star is left almost as it is,
// while a distant star whose tangential speed is mostly proper-motion noise
// is no longer called unbound. The distant star (invented) lies 60 kpc
// away with a proper motion of 2.1 mas/yr (about 600 km/s across the line
// of sight, 4.74 km/s per mas/yr per kpc) measured to 0.5 mas/yr per
// component (about 140 km/s), rv 100 +- 5 km/s and a 10 per cent catalog
// distance: flat, it is unbound at p near 0.97; under a 150 km/s prior the
// conjugate shrinkage sigma^2/(sigma^2 + s^2) of about one half takes its
// tangential speed to near the escape speed.
func TestVelocityPriorInEvaluate(t *testing.T) {
	far := Star{ID: "far-noisy", RADeg: 100, DecDeg: 30, ParallaxMas: nan, ParallaxErrMas: nan,
		PMRAMasYr: -1.5, PMRAErrMasYr: 0.5, PMDecMasYr: -1.5, PMDecErrMasYr: 0.5, RVKms: 100, RVErrKms: 5,
		DistKpc: 60, DistErrKpc: 6, DistMod: nan, DistModErr: nan,
		CorrParallaxPMRA: nan, CorrParallaxPMDec: nan, CorrPMRAPMDec: nan}
	near := baseStar("near-precise")
	flat, with := testSettings(), testSettings()
	with.VelocityPriorKms = 150

	a, b := eval(near, flat), eval(near, with)
	if !a.OK || !b.OK {
		t.Fatalf("near: %v %v", a.Reasons, b.Reasons)
	}
	// The shift of the mean speed is about v sigma_v^2 / sigma^2 for a
	// precise star (conjugate normal, Gelman et al. 2013, eq. 2.12): here
	// well under 1 per cent.
	if d := math.Abs(b.SpeedKms[1]/a.SpeedKms[1] - 1); d > 0.01 {
		t.Errorf("near: median speed %v with the prior, %v without (%.3f apart)", b.SpeedKms[1], a.SpeedKms[1], d)
	}
	if hasReason(b, ReasonPriorDominated) {
		t.Errorf("near: prior-dominated note on a precise star")
	}

	a, b = eval(far, flat), eval(far, with)
	if !a.OK || !b.OK {
		t.Fatalf("far: %v %v", a.Reasons, b.Reasons)
	}
	t.Logf("far: flat speed %v p %.3f; prior speed %v p %.3f (v_esc %v)", a.SpeedKms, a.PUnbound, b.SpeedKms, b.PUnbound, b.VEscKms[1])
	if b.PUnboundFlat != a.PUnbound || !math.IsNaN(a.PUnboundFlat) {
		t.Errorf("far: flat share %v recorded with the prior, %v without; want %v and NaN", b.PUnboundFlat, a.PUnboundFlat, a.PUnbound)
	}
	if !(a.PUnbound >= 0.8) {
		t.Fatalf("far: flat-prior p_unbound %.3f; the test star should look unbound without the prior", a.PUnbound)
	}
	if !(b.PUnbound < 0.8) || !(b.SpeedKms[1] < 0.7*a.SpeedKms[1]) {
		t.Errorf("far: prior p_unbound %.3f (flat %.3f), median speed %v (flat %v)", b.PUnbound, a.PUnbound, b.SpeedKms[1], a.SpeedKms[1])
	}
	// The traced draws come from the resample: their speeds follow it.
	var sum float64
	for _, v := range b.SampleVel {
		sum += math.Sqrt(vec.Dot(v, v))
	}
	if m := sum / float64(len(b.SampleVel)); math.Abs(m-b.SpeedKms[1]) > 0.25*b.SpeedKms[1] {
		t.Errorf("far: traced draws' mean speed %.1f far from the posterior median %.1f", m, b.SpeedKms[1])
	}
}
