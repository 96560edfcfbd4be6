package kinematics

import (
	"math"
	"math/rand/v2"
	"testing"
)

// posteriorMoments integrates p(d) ∝ N(d; mu, s) N(w; 1/d, sw) over d > 0
// by the midpoint rule (Bayes' theorem with a normal catalog distance as
// prior and a normal parallax likelihood): an independent reference for the
// rejection sampler.
func posteriorMoments(mu, s, w, sw float64) (mean, sd float64) {
	const n = 200000
	lo, hi := math.Max(1e-6, mu-10*s), mu+10*s
	h := (hi - lo) / n
	var z, m1, m2 float64
	for i := range n {
		d := lo + (float64(i)+0.5)*h
		a, b := (d-mu)/s, (w-1/d)/sw
		p := math.Exp(-a*a/2 - b*b/2)
		z += p
		m1 += p * d
		m2 += p * d * d
	}
	mean = m1 / z
	return mean, math.Sqrt(m2/z - mean*mean)
}

func TestCatalogDistanceWeighedByParallax(t *testing.T) {
	cases := []struct {
		name        string
		distKpc, sd float64
		plx, plxErr float64
	}{
		// A parallax of ~2 sigma at 8.7 kpc against a catalog distance of
		// 10 +- 1.4 kpc: the posterior moves toward the parallax.
		{"informative", 10.0, 1.4, 0.1145, 0.05},
		// A parallax error of 0.5 mas at 50 kpc carries no information.
		{"uninformative", 50.0, 7.0, 0.3, 0.5},
		// A negative parallax favours larger distances.
		{"negative parallax", 5.0, 1.0, -0.05, 0.08},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := baseStar("cat-" + c.name)
			s.DistKpc, s.DistErrKpc = c.distKpc, c.sd
			s.ParallaxMas, s.ParallaxErrMas = c.plx, c.plxErr
			set := testSettings()
			set.Distance = MethodCatalog
			set.Samples = 20000
			var r Result
			w := &worker{}
			w.evaluate(&s, &set, milkyWayTest(), &r)
			if !r.OK {
				t.Fatalf("not ok: %+v", r.Reasons)
			}
			mean, sd := posteriorMoments(c.distKpc, c.sd, c.plx, c.plxErr)
			var got float64
			for _, d := range w.dist[:r.Samples] {
				got += d
			}
			got /= float64(r.Samples)
			// Monte Carlo tolerance: 4 standard errors of the mean.
			if tol := 4 * sd / math.Sqrt(float64(r.Samples)); math.Abs(got-mean) > tol {
				t.Errorf("mean distance %.4f kpc, quadrature %.4f +- %.4f", got, mean, tol)
			}
		})
	}
}

func TestCatalogDistanceExcludedByParallax(t *testing.T) {
	s := baseStar("cat-conflict")
	// A 40-sigma parallax at 1 kpc against a catalog distance of 30 kpc.
	s.DistKpc, s.DistErrKpc = 30, 1
	s.ParallaxMas, s.ParallaxErrMas = 1.0, 0.025
	set := testSettings()
	set.Distance = MethodCatalog
	r := eval(s, set)
	if r.OK || !hasReason(r, ReasonPlxConflict) {
		t.Fatalf("want a fatal %s reason, got ok=%v %+v", ReasonPlxConflict, r.OK, r.Reasons)
	}
}

// logBelow decides ln(u) < t as math.Log does, near and far from the
// bounds it uses.
func TestLogBelow(t *testing.T) {
	rnd := rand.New(rand.NewPCG(21, 22))
	for i := range 200000 {
		u := rnd.Float64()
		var th float64
		switch i % 3 {
		case 0:
			th = -3 * rnd.Float64()
		case 1:
			th = math.Log(u) * (1 + 1e-9*rnd.NormFloat64()) // at the boundary
		default:
			th = (u - 1) * (1 - 1e-6*rnd.Float64())
		}
		if got, want := logBelow(u, th), math.Log(u) < th; got != want {
			t.Fatalf("logBelow(%v, %v) = %v, want %v", u, th, got, want)
		}
	}
	if !logBelow(0, -50) || logBelow(0.5, math.Log(0.5)) {
		t.Error("edge cases")
	}
}
