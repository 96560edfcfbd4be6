package kinematics

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"starvet/galaxy/frames"
)

// rejectionCatalog is the sampler of a catalog distance weighed by the
// parallax before the table (evaluate.go as of commit 7c20b76), kept as the
// reference the table is checked against: a catalog draw is kept with
// probability L(d)/L_max, and the proper motions are drawn after each kept
// distance from the same stream. It fills draws 0..n-1; false when
// maxCatalogTries x n tries kept fewer than n.
func (w *worker) rejectionCatalog(dr *drawing, n int) bool {
	lnLMax := 0.0
	if dr.wObs <= 0 {
		lnLMax = -dr.wObs * dr.wObs / (2 * dr.sw * dr.sw)
	}
	tries := 0
	for i := range n {
		for {
			if tries >= maxCatalogTries*n {
				return false
			}
			tries++
			d := dr.cat.draw(&w.rnd)
			z := (dr.wObs - 1/d) / dr.sw
			if logBelow(w.rnd.float64(), -z*z/2-lnLMax) {
				w.drawPM(&w.rnd, i, d, dr.wObs, dr.mean, dr.beta, &dr.cond)
				break
			}
		}
	}
	dr.kept, dr.attempts = n, n
	return true
}

// evalRejection is evaluate with the rejection sampler for a star with a
// catalog distance and a parallax (no early stopping).
func evalRejection(t *testing.T, s Star, set Settings) Result {
	t.Helper()
	var w worker
	var r Result
	r.reset(s.ID)
	r.OK = true
	corr, ok := validateInputs(&s, &set, &r)
	method, cat := chooseDistance(&s, &set, &r)
	r.Method = method
	if !ok || !r.OK || method != MethodCatalog {
		t.Fatalf("%s: method %s, reasons %v", s.ID, method, r.Reasons)
	}
	w.init(set.Samples)
	w.rnd.seed(starSeed(set.Seed, s.ID, streamAstrometry))
	w.rndV.seed(starSeed(set.Seed, s.ID, streamRV))
	dr, ok := w.prepareAstrometry(&s, &set, method, cat, corr, &r)
	if !ok || !dr.catPlx || !w.rejectionCatalog(&dr, set.Samples) {
		t.Fatalf("%s: rejection sampler failed: %v", s.ID, r.Reasons)
	}
	hasRV := !math.IsNaN(s.RVKms) && !math.IsNaN(s.RVErrKms)
	w.drawRVBlock(&s, hasRV, 0, dr.kept)
	w.finish(&s, &set, milkyWayTest(), &dr, hasRV, &r)
	return r
}

// The tabulated catalog posterior against the rejection sampler it
// replaced, on representative stars (kpc and modulus distances,
// informative, uninformative and negative parallaxes, near and far, with
// and without rv, flat and 150 km/s velocity prior), 4000 draws each from
// different streams: p_unbound (unweighted) within 4 combined binomial standard errors
// (Laplace estimate (k+1)/(n+2) so that 0 has one; common practice), and
// each distance and speed percentile of one sampler between the other's
// order statistics of ranks n q -+ 4 sqrt(2 n q (1-q)) (the
// distribution-free interval of a quantile, e.g. David & Nagaraja 2003,
// Order Statistics, 3rd ed., sec. 7.1, from memory, widened by sqrt(2)
// for the error of the other sample's own percentile).
func TestCatalogTableMatchesRejection(t *testing.T) {
	const z = 4
	sun := frames.DefaultSun()
	type tc struct {
		distKpc, distErrKpc, mod, modErr, plx, plxErr float64
		target                                        [3]float64
		rv                                            bool
	}
	cases := []tc{
		{10, 1.4, nan, nan, 0.1145, 0.05, [3]float64{300, 250, -200}, true},
		{50, 7, nan, nan, 0.3, 0.5, [3]float64{-400, 100, 350}, true},
		{5, 1, nan, nan, -0.05, 0.08, [3]float64{100, 200, 50}, false},
		{nan, nan, 14.5, 0.2, 0.09, 0.04, [3]float64{-150, 420, 120}, true},
		{nan, nan, 11.0, 0.3, 0.45, 0.2, [3]float64{250, -50, 300}, true},
		{nan, nan, 16.0, 0.25, 0.01, 0.1, [3]float64{0, 0, 600}, false},
		{2, 0.5, nan, nan, 0.7, 0.15, [3]float64{50, 240, 30}, true},
	}
	for i, c := range cases {
		dTrue := c.distKpc
		if math.IsNaN(dTrue) {
			dTrue = distanceFromModulusKpc(c.mod)
		}
		s := baseStar(fmt.Sprint("cat-ref-", i))
		s.DistKpc, s.DistErrKpc, s.DistMod, s.DistModErr = c.distKpc, c.distErrKpc, c.mod, c.modErr
		s.ParallaxMas, s.ParallaxErrMas = c.plx, c.plxErr
		s.PMRAMasYr, s.PMDecMasYr, s.RVKms = velocityInputs(sun, s.RADeg, s.DecDeg, dTrue, c.target)
		if !c.rv {
			s.RVKms = nan
		}
		for _, prior := range []float64{0, 150} {
			t.Run(fmt.Sprint(i, "-prior-", prior), func(t *testing.T) {
				set := testSettings()
				set.Distance, set.Samples, set.KeepSamples, set.VelocityPriorKms = MethodCatalog, 4000, 4000, prior
				got := eval(s, set)
				set.Seed++ // an independent stream for the reference
				ref := evalRejection(t, s, set)
				if !got.OK || !ref.OK {
					t.Fatalf("ok %v / %v: %v %v", got.OK, ref.OK, got.Reasons, ref.Reasons)
				}
				// The unweighted share: the weighted one's error is not
				// binomial when the weights follow the speed.
				pg, pr := got.PUnboundLower, ref.PUnboundLower
				if got.HasRV {
					pg, pr = got.PUnbound, ref.PUnbound
					if prior > 0 {
						pg, pr = got.PUnboundFlat, ref.PUnboundFlat
					}
				}
				n := float64(set.Samples)
				pl := (pr*n + 1) / (n + 2)
				if se := math.Sqrt(pl * (1 - pl) * 2 / n); math.Abs(pg-pr) > z*se {
					t.Errorf("p_unbound %v (table) vs %v (rejection), se %.3g", pg, pr, se)
				}
				speeds := func(r *Result) []float64 {
					v := make([]float64, len(r.SampleVel))
					for j, x := range r.SampleVel {
						v[j] = math.Sqrt(x[0]*x[0] + x[1]*x[1] + x[2]*x[2])
					}
					return v
				}
				dists := func(r *Result) []float64 {
					v := make([]float64, len(r.SamplePos))
					l := newLineOfSight(set.Sun, s.RADeg, s.DecDeg)
					for j, x := range r.SamplePos {
						// pos = pos0 + d posR: d from the offset along posR.
						v[j] = ((x[0]-l.pos0[0])*l.posR[0] + (x[1]-l.pos0[1])*l.posR[1] + (x[2]-l.pos0[2])*l.posR[2]) /
							(l.posR[0]*l.posR[0] + l.posR[1]*l.posR[1] + l.posR[2]*l.posR[2])
					}
					return v
				}
				vg, vr := got.SpeedLowerKms, ref.SpeedLowerKms
				if got.HasRV {
					vg, vr = got.SpeedKms, ref.SpeedKms
				}
				for _, q := range []struct {
					name     string
					a, b     [3]float64
					aS, bS   []float64
					neA, neB float64
				}{
					{"distance", got.DistKpc, ref.DistKpc, dists(&got), dists(&ref), got.EffectiveSamples, ref.EffectiveSamples},
					{"speed", vg, vr, speeds(&got), speeds(&ref), got.EffectiveSamples, ref.EffectiveSamples},
				} {
					for k, p := range percentileLevels {
						for _, side := range []struct {
							x      float64
							sample []float64
							neff   float64
						}{{q.a[k], q.bS, q.neB}, {q.b[k], q.aS, q.neA}} {
							v := slices.Clone(side.sample)
							slices.Sort(v)
							n := float64(len(v))
							half := z * math.Sqrt(2*side.neff*p*(1-p)) * n / side.neff
							lo, hi := max(0, int(math.Floor(n*p-half))), min(len(v)-1, int(math.Ceil(n*p+half)))
							if side.x < v[lo]*(1-1e-9) || side.x > v[hi]*(1+1e-9) {
								t.Errorf("%s p%.0f: %v outside [%v, %v] of the other sampler", q.name, 100*p, side.x, v[lo], v[hi])
							}
						}
					}
				}
			})
		}
	}
}

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

// A conflict fails the star where the rejection sampler of earlier builds
// (rejectionCatalog above: at most 200 tries per kept draw over the star's
// Samples draws) failed: below a share of about 1/200 of the catalog
// distance admitted, since it then kept fewer than Samples draws in
// 200 Samples tries. Above it the star is drawn, with a note below 5%. The
// shares are exp(-z^2/2) for a point catalog distance z parallax errors
// from the parallax (a normal likelihood, common practice).
func TestCatalogConflictThreshold(t *testing.T) {
	set := testSettings()
	set.Distance = MethodCatalog
	for _, c := range []struct {
		z        float64
		ok, note bool
	}{
		{z: 1, ok: true},                 // share 0.61
		{z: 2.8, ok: true, note: true},   // share 0.020
		{z: 3.1, ok: true, note: true},   // share 0.0082
		{z: 3.45, ok: false, note: true}, // share 0.0026
		{z: 5.5, ok: false, note: true},  // share 2.7e-7
	} {
		s := baseStar("cat-share")
		s.DistKpc, s.DistErrKpc = 1, 0
		s.ParallaxErrMas = 0.05
		s.ParallaxMas = 1 + c.z*s.ParallaxErrMas + set.ParallaxZeroPointMas
		r := eval(s, set)
		if r.OK != c.ok || hasReason(r, ReasonPlxConflict) != c.note {
			t.Errorf("z = %v: ok %v, conflict reason %v; want %v, %v (%+v)", c.z, r.OK, hasReason(r, ReasonPlxConflict), c.ok, c.note, r.Reasons)
		}
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

// logBelow reports ln(u) < t for u in [0, 1). The bounds
// 1 - 1/u <= ln(u) <= u - 1 (from ln(x) <= x - 1, e.g. Abramowitz & Stegun
// 1964, 4.1.33, from memory) decide most cases without the logarithm; the margin keeps
// the decision that of math.Log.
func logBelow(u, t float64) bool {
	const margin = 1e-12
	switch {
	case u-1 < t-margin:
		return true
	case 1-1/u > t+margin:
		return false
	}
	return math.Log(u) < t
}
