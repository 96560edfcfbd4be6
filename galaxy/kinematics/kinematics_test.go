package kinematics

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distmv"

	"starvet/galaxy/frames"
	"starvet/internal/units"
	"starvet/internal/vec"
)

var nan = math.NaN()

// baseStar is an invented star with every field set; tests modify copies.
func baseStar(id string) Star {
	return Star{
		ID: id, RADeg: 150.2, DecDeg: -12.7,
		ParallaxMas: 0.5, ParallaxErrMas: 0.02,
		PMRAMasYr: -3.1, PMRAErrMasYr: 0.03, PMDecMasYr: 4.4, PMDecErrMasYr: 0.025,
		RVKms: 250, RVErrKms: 5,
		DistKpc: nan, DistErrKpc: nan, DistMod: nan, DistModErr: nan,
		CorrParallaxPMRA: nan, CorrParallaxPMDec: nan, CorrPMRAPMDec: nan,
	}
}

func testSettings() Settings {
	s := DefaultSettings(frames.DefaultSun())
	s.Seed = 20261201
	return s
}

func eval(s Star, set Settings) Result {
	var r Result
	Evaluate(&s, &set, milkyWayTest(), &r)
	return r
}

func hasReason(r Result, code string) bool {
	return slices.ContainsFunc(r.Reasons, func(x Reason) bool { return x.Code == code })
}

func TestKmsPerMasYrKpc(t *testing.T) {
	// 4.740470464 km/s per (mas/yr kpc): 1 au per Julian year (from memory).
	if math.Abs(units.KmsPerMasYrKpc-4.740470464) > 1e-9 {
		t.Fatalf("KmsPerMasYrKpc = %.10f", units.KmsPerMasYrKpc)
	}
	// A star at 1 kpc with 1 mas/yr and no rv moves 4.740470464 km/s
	// relative to the Sun, whichever the direction of the motion.
	for _, tc := range []struct {
		name        string
		pmRA, pmDec float64
	}{
		{"ra", 1, 0}, {"dec", 0, 1}, {"diagonal", math.Sqrt(0.5), math.Sqrt(0.5)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			l := newLineOfSight(frames.DefaultSun(), 33, 44)
			_, v := l.at(1, tc.pmRA, tc.pmDec, 0)
			rel := [3]float64{v[0] - l.vel0[0], v[1] - l.vel0[1], v[2] - l.vel0[2]}
			if got := vec.Norm(rel); math.Abs(got-4.740470464) > 1e-8 {
				t.Errorf("speed %.10f km/s", got)
			}
		})
	}
}

// The linear line-of-sight map must agree with frames.Sun.ToGalactocentric.
func TestLineOfSightMatchesFrames(t *testing.T) {
	sun := frames.DefaultSun()
	for _, tc := range []struct{ ra, dec, d, pa, pd, rv float64 }{
		{10, 20, 3, 1, -2, 100}, {266.4, -28.9, 8, 0, 0, 0}, {300, 80, 0.1, 50, 40, -300},
	} {
		t.Run(fmt.Sprint(tc.ra, tc.dec), func(t *testing.T) {
			l := newLineOfSight(sun, tc.ra, tc.dec)
			p1, v1 := l.at(tc.d, tc.pa, tc.pd, tc.rv)
			p2, v2 := sun.ToGalactocentric(frames.NewBasis(tc.ra*units.RadPerDeg, tc.dec*units.RadPerDeg), tc.d, tc.pa, tc.pd, tc.rv)
			for i := range 3 {
				if math.Abs(p1[i]-p2[i]) > 1e-12 || math.Abs(v1[i]-v2[i]) > 1e-9 {
					t.Errorf("pos %v vs %v, vel %v vs %v", p1, p2, v1, v2)
				}
			}
		})
	}
}

func TestDistanceModulus(t *testing.T) {
	// Definition: mu = 5 log10(d / 10 pc).
	for _, tc := range []struct{ mu, wantKpc float64 }{
		{0, 0.01}, {5, 0.1}, {10, 1}, {15, 10}, {17.5, 31.6227766016838},
	} {
		t.Run(fmt.Sprint(tc.mu), func(t *testing.T) {
			if got := distanceFromModulusKpc(tc.mu); math.Abs(got-tc.wantKpc) > 1e-12*tc.wantKpc {
				t.Errorf("d(%v) = %v kpc, want %v", tc.mu, got, tc.wantKpc)
			}
			s := baseStar("mod")
			s.ParallaxMas, s.DistMod, s.DistModErr = nan, tc.mu, 0
			r := eval(s, testSettings())
			if r.Method != MethodCatalog || math.Abs(r.DistKpc[1]-tc.wantKpc) > 1e-12*tc.wantKpc {
				t.Errorf("method %s distance %v, want catalog %v", r.Method, r.DistKpc, tc.wantKpc)
			}
		})
	}
}

// Zero uncertainties collapse the Monte Carlo onto the deterministic value,
// computed here directly with frames.Sun.ToGalactocentric and Phi.
func TestZeroErrorsCollapse(t *testing.T) {
	zero := func(s Star) Star {
		s.ParallaxErrMas, s.PMRAErrMasYr, s.PMDecErrMasYr, s.RVErrKms = 0, 0, 0, 0
		s.CorrParallaxPMRA, s.CorrParallaxPMDec, s.CorrPMRAPMDec = 0.3, -0.2, 0.1
		return s
	}
	cases := []struct {
		name, method string
		star         Star
		distKpc      float64
	}{
		{"inverse", MethodInverse, zero(baseStar("z1")), 2},
		{"edsd", MethodEDSD, zero(baseStar("z2")), 2},
		{"auto", MethodAuto, zero(baseStar("z3")), 2},
		{"catalog-kpc", MethodCatalog, func() Star { s := zero(baseStar("z4")); s.DistKpc, s.DistErrKpc = 7, 0; return s }(), 7},
		{"catalog-mod", MethodCatalog, func() Star { s := zero(baseStar("z5")); s.DistMod, s.DistModErr = 14, 0; return s }(), 10 * math.Pow(10, 14.0/5) / 1000},
	}
	p := milkyWayTest()
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			set := testSettings()
			set.Distance = tc.method
			r := eval(tc.star, set)
			if !r.OK {
				t.Fatalf("reasons %v", r.Reasons)
			}
			s := tc.star
			pos, vel := set.Sun.ToGalactocentric(frames.NewBasis(s.RADeg*units.RadPerDeg, s.DecDeg*units.RadPerDeg), tc.distKpc, s.PMRAMasYr, s.PMDecMasYr, s.RVKms)
			speed := vec.Norm(vel)
			vesc := math.Sqrt(-2 * p.Phi(pos))
			vr := vec.Dot(pos, vel) / vec.Norm(pos)
			for _, q := range []struct {
				name string
				got  [3]float64
				want float64
			}{
				{"dist", r.DistKpc, tc.distKpc}, {"speed", r.SpeedKms, speed}, {"rgc", r.RGCKpc, vec.Norm(pos)},
				{"vesc", r.VEscKms, vesc}, {"vrad", r.VRadialKms, vr}, {"vtan", r.VTangentialKms, math.Sqrt(speed*speed - vr*vr)},
			} {
				for k := range 3 {
					if math.Abs(q.got[k]-q.want) > 1e-9*math.Max(1, math.Abs(q.want)) {
						t.Errorf("%s percentile %d = %.12g, want %.12g", q.name, k, q.got[k], q.want)
					}
				}
			}
			want := 0.0
			if speed > vesc {
				want = 1
			}
			if r.PUnbound != want {
				t.Errorf("p_unbound %v, want %v", r.PUnbound, want)
			}
			for i := range 3 {
				if math.Abs(r.VelKms[i]-vel[i]) > 1e-9 || math.Abs(r.PosKpc[i]-pos[i]) > 1e-12 {
					t.Errorf("nominal pos %v vel %v, want %v %v", r.PosKpc, r.VelKms, pos, vel)
				}
			}
		})
	}
}

// velocityInputs returns the pm and rv giving Galactocentric velocity
// target for a star at dKpc toward (ra, dec).
func velocityInputs(sun frames.Sun, ra, dec, dKpc float64, target [3]float64) (pmRA, pmDec, rv float64) {
	l := newLineOfSight(sun, ra, dec)
	dv := [3]float64{target[0] - l.vel0[0], target[1] - l.vel0[1], target[2] - l.vel0[2]}
	return vec.Dot(dv, l.velA) / (dKpc * vec.Dot(l.velA, l.velA)), vec.Dot(dv, l.velD) / (dKpc * vec.Dot(l.velD, l.velD)), vec.Dot(dv, l.velR) / vec.Dot(l.velR, l.velR)
}

// Common practice facts with the Milky-Way-like test potential.
func TestBoundUnboundFacts(t *testing.T) {
	sun := frames.DefaultSun()
	// The Sun's position: a star 10 pc away moving 300 km/s in the
	// Galactocentric rest frame (along rotation) is bound: v_esc ~ 530 km/s
	// (Piffl et al. 2014, A&A 562, A91).
	ra1, dec1 := 120.0, 30.0
	pa1, pd1, rv1 := velocityInputs(sun, ra1, dec1, 0.01, [3]float64{0, 300, 0})
	// 50 kpc from the centre toward the anticentre, receding at 1200 km/s.
	raA, decA := frames.GalacticToICRS(math.Pi, 0)
	raA, decA = raA/units.RadPerDeg, decA/units.RadPerDeg
	dA := 50 - sun.DistanceKpc
	paA, pdA, rvA := velocityInputs(sun, raA, decA, dA, [3]float64{-1200, 0, 0})
	cases := []struct {
		name       string
		star       Star
		wantRGC    float64
		wantSpeed  float64
		minP, maxP float64
	}{
		{"local-300", Star{ID: "loc", RADeg: ra1, DecDeg: dec1, ParallaxMas: 100, ParallaxErrMas: 0.05,
			PMRAMasYr: pa1, PMRAErrMasYr: 0.05, PMDecMasYr: pd1, PMDecErrMasYr: 0.05, RVKms: rv1, RVErrKms: 2,
			DistKpc: nan, DistErrKpc: nan, DistMod: nan, DistModErr: nan}, sun.DistanceKpc, 300, 0, 0},
		{"far-1200", Star{ID: "far", RADeg: raA, DecDeg: decA, ParallaxMas: nan, ParallaxErrMas: nan,
			PMRAMasYr: paA, PMRAErrMasYr: 0.02, PMDecMasYr: pdA, PMDecErrMasYr: 0.02, RVKms: rvA, RVErrKms: 20,
			DistKpc: dA, DistErrKpc: 2, DistMod: nan, DistModErr: nan}, 50, 1200, 0.99, 1},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			r := eval(tc.star, testSettings())
			if !r.OK || !r.HasRV {
				t.Fatalf("ok %v rv %v reasons %v", r.OK, r.HasRV, r.Reasons)
			}
			if math.Abs(r.RGCKpc[1]-tc.wantRGC) > 0.05*tc.wantRGC || math.Abs(r.SpeedKms[1]-tc.wantSpeed) > 0.03*tc.wantSpeed {
				t.Errorf("rgc %v speed %v, want about %v and %v", r.RGCKpc, r.SpeedKms, tc.wantRGC, tc.wantSpeed)
			}
			if r.PUnbound < tc.minP || r.PUnbound > tc.maxP {
				t.Errorf("p_unbound %v outside [%v, %v] (v_esc %v)", r.PUnbound, tc.minP, tc.maxP, r.VEscKms)
			}
		})
	}
}

// With common random numbers, raising rv on the rising branch of |v(rv)|
// cannot lower p_unbound; it goes from 0 to 1 across v_esc.
func TestPUnboundMonotoneInRV(t *testing.T) {
	s := baseStar("scan")
	s.ParallaxMas, s.ParallaxErrMas = 0.25, 0.01 // 4 kpc
	set := testSettings()
	l := newLineOfSight(set.Sun, s.RADeg, s.DecDeg)
	_, v0 := l.at(4, s.PMRAMasYr, s.PMDecMasYr, 0)
	rvMin := -vec.Dot(v0, l.velR) // minimum speed here
	prev := -1.0
	var ps []float64
	for rv := rvMin + 100; rv <= rvMin+1500; rv += 25 {
		s.RVKms = rv
		r := eval(s, set)
		if r.PUnbound < prev {
			t.Errorf("rv %.0f: p_unbound %v fell below %v", rv, r.PUnbound, prev)
		}
		prev = r.PUnbound
		ps = append(ps, r.PUnbound)
	}
	if ps[0] != 0 || ps[len(ps)-1] != 1 {
		t.Errorf("scan should go from 0 to 1: %v", ps)
	}
}

// Without rv the reported speeds bound the speed for every rv from below.
func TestMissingRVLowerBound(t *testing.T) {
	set := testSettings()
	set.KeepSamples = set.Samples
	s := baseStar("norv")
	s.RVKms, s.RVErrKms = nan, nan
	low := eval(s, set)
	if !low.OK || low.HasRV || !hasReason(low, ReasonNoRV) || !math.IsNaN(low.PUnbound) || math.IsNaN(low.PUnboundLower) {
		t.Fatalf("no-rv result: ok %v hasRV %v p %v plow %v reasons %v", low.OK, low.HasRV, low.PUnbound, low.PUnboundLower, low.Reasons)
	}
	for rv := -2000.0; rv <= 2000; rv += 50 {
		s.RVKms, s.RVErrKms = rv, 0
		r := eval(s, set)
		for i := range r.SampleVel {
			if v, lb := vec.Norm(r.SampleVel[i]), vec.Norm(low.SampleVel[i]); v < lb-1e-9 {
				t.Fatalf("rv %v sample %d: speed %v below bound %v", rv, i, v, lb)
			}
		}
		for k := range 3 {
			if r.SpeedKms[k] < low.SpeedLowerKms[k]-1e-9 {
				t.Errorf("rv %v: speed percentile %d %v below bound %v", rv, k, r.SpeedKms[k], low.SpeedLowerKms[k])
			}
		}
		if r.PUnbound < low.PUnboundLower {
			t.Errorf("rv %v: p_unbound %v below the lower-bound share %v", rv, r.PUnbound, low.PUnboundLower)
		}
	}
	// The bound is attained: at rv = -(v0 . u) with zero errors.
	z := baseStar("attain")
	z.ParallaxErrMas, z.PMRAErrMasYr, z.PMDecErrMasYr = 0, 0, 0
	z.RVKms, z.RVErrKms = nan, nan
	lz := eval(z, set)
	l := newLineOfSight(set.Sun, z.RADeg, z.DecDeg)
	_, v0 := l.at(2, z.PMRAMasYr, z.PMDecMasYr, 0)
	z.RVKms, z.RVErrKms = -vec.Dot(v0, l.velR), 0
	at := eval(z, set)
	if math.Abs(at.SpeedKms[1]-lz.SpeedLowerKms[1]) > 1e-9 {
		t.Errorf("speed at the minimising rv %v, bound %v", at.SpeedKms[1], lz.SpeedLowerKms[1])
	}
}

func TestEscapeRadius(t *testing.T) {
	// Point mass: v_esc^2 = 2GM (1/r - 1/r_lim) (Newton).
	p := pointMass{1e12}
	x := [3]float64{3, 4, 12} // r = 13
	for _, tc := range []struct {
		name       string
		rLim, want float64
	}{
		{"infinity", 0, math.Sqrt(2 * gravConst * 1e12 / 13)},
		{"100kpc", 100, math.Sqrt(2 * gravConst * 1e12 * (1.0/13 - 1.0/100))},
		{"inside", 10, 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := escapeSpeed(p, x, 13, tc.rLim); math.Abs(got-tc.want) > 1e-9*math.Max(1, tc.want) {
				t.Errorf("v_esc %v, want %v", got, tc.want)
			}
		})
	}
}

// fast draws must be exactly those of distmv.Normal.Rand from the same
// generator state (the fast path only avoids distmv's per-draw allocations
// and interface calls; the stream is gonum's xoshiro256++,
// TestStreamMatches).
func TestGaussMatchesDistmv(t *testing.T) {
	mean := [3]float64{0.5, -3, 4}
	sw, sa, sd := 0.1, 0.2, 0.15
	cov := [3][3]float64{{sw * sw, 0.3 * sw * sa, -0.4 * sw * sd}, {0.3 * sw * sa, sa * sa, 0.2 * sa * sd}, {-0.4 * sw * sd, 0.2 * sa * sd, sd * sd}}
	var rnd stream
	rnd.seed(1, 2)
	src := referenceSource(t, rnd)
	g, ok := newGauss(3, mean, &cov)
	if !ok {
		t.Fatal("not positive definite")
	}
	sym := mat.NewSymDense(3, []float64{cov[0][0], cov[0][1], cov[0][2], cov[1][0], cov[1][1], cov[1][2], cov[2][0], cov[2][1], cov[2][2]})
	ref, _ := distmv.NewNormal(mean[:], sym, src)
	for i := range 100 {
		var x [3]float64
		g.draw(&rnd, &x)
		y := ref.Rand(nil)
		for k := range 3 {
			if math.Abs(x[k]-y[k]) > 1e-14 {
				t.Fatalf("draw %d: %v vs distmv %v", i, x, y)
			}
		}
	}
}

// Correlated draws reproduce the input correlations within a few standard
// errors (1 - rho^2)/sqrt(N) (Fisher 1915, Biometrika 10, 507, large-N).
func TestCorrelatedDraws(t *testing.T) {
	const n = 40000
	rho := [3]float64{0.4, -0.6, 0.25}
	for _, method := range []string{MethodInverse, MethodEDSD} {
		t.Run(method, func(t *testing.T) {
			s := baseStar("corr-" + method)
			s.ParallaxMas, s.ParallaxErrMas = 2, 0.05 // 40 sigma: parallax draws ~ normal
			s.CorrParallaxPMRA, s.CorrParallaxPMDec, s.CorrPMRAPMDec = rho[0], rho[1], rho[2]
			set := testSettings()
			set.Samples, set.Distance = n, method
			var w worker
			var r Result
			w.evaluate(&s, &set, milkyWayTest(), &r)
			if !r.OK {
				t.Fatal(r.Reasons)
			}
			got := [3]float64{
				stat.Correlation(w.plx, w.pmRA, nil), stat.Correlation(w.plx, w.pmDec, nil), stat.Correlation(w.pmRA, w.pmDec, nil),
			}
			for k := range 3 {
				tol := 4 * (1 - rho[k]*rho[k]) / math.Sqrt(n)
				if math.Abs(got[k]-rho[k]) > tol {
					t.Errorf("correlation %d: %.4f, want %.4f +- %.4f", k, got[k], rho[k], tol)
				}
			}
			if sd := stat.StdDev(w.pmRA, nil); math.Abs(sd-s.PMRAErrMasYr) > 4*s.PMRAErrMasYr/math.Sqrt(2*n) {
				t.Errorf("pm_ra spread %v, want %v", sd, s.PMRAErrMasYr)
			}
		})
	}
}

// At low parallax/error the EDSD parallax is far from normal, but the
// proper motions must still regress on the implied parallax with slope
// S_mw/S_ww and residual variance S_mm - S_mw^2/S_ww (conditional normal).
//
// The slope's standard error is sd(residual) / (sd(parallax) sqrt(N))
// (least squares, e.g. Draper & Smith 1998, Applied Regression Analysis,
// 3rd ed., sec. 1.4, from memory); N is large enough that the 0.01
// tolerance is at least four of them (checked below).
func TestEDSDConditionalProperMotions(t *testing.T) {
	const n = 500000
	s := baseStar("edsd-cond")
	s.ParallaxMas, s.ParallaxErrMas = 0.1, 0.08
	s.PMRAErrMasYr, s.CorrParallaxPMRA = 0.09, -0.5
	set := testSettings()
	set.Samples, set.Distance = n, MethodEDSD
	var w worker
	var r Result
	w.evaluate(&s, &set, milkyWayTest(), &r)
	if !r.OK || r.Method != MethodEDSD {
		t.Fatal(r.Method, r.Reasons)
	}
	_, slope := stat.LinearRegression(w.plx, w.pmRA, nil, false)
	wantSlope := -0.5 * 0.09 / 0.08
	se := 0.09 * math.Sqrt(1-0.25) / (stat.StdDev(w.plx, nil) * math.Sqrt(n))
	if 4*se > 0.01 {
		t.Fatalf("standard error of the slope %v: too few draws for the tolerance", se)
	}
	if math.Abs(slope-wantSlope) > 0.01 {
		t.Errorf("slope %v, want %v (standard error %.2g)", slope, wantSlope, se)
	}
	res := make([]float64, n)
	for i := range n {
		res[i] = w.pmRA[i] - (s.PMRAMasYr + wantSlope*(w.plx[i]-s.ParallaxMas))
	}
	wantSD := 0.09 * math.Sqrt(1-0.25)
	if sd := stat.StdDev(res, nil); math.Abs(sd-wantSD) > 4*wantSD/math.Sqrt(2*n) {
		t.Errorf("residual spread %v, want %v", sd, wantSD)
	}
}

func TestNonPositiveDefinite(t *testing.T) {
	for _, tc := range []struct {
		name   string
		method string
		corr   [3]float64
	}{
		{"inverse", MethodInverse, [3]float64{0.9, 0.9, -0.9}},
		{"edsd", MethodEDSD, [3]float64{0.9, 0.9, -0.9}},
		{"pm-only-singular", MethodCatalog, [3]float64{0, 0, 1}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := baseStar("npd")
			s.DistKpc, s.DistErrKpc = 3, 0.3
			s.CorrParallaxPMRA, s.CorrParallaxPMDec, s.CorrPMRAPMDec = tc.corr[0], tc.corr[1], tc.corr[2]
			set := testSettings()
			set.Distance = tc.method
			r := eval(s, set)
			if r.OK || !hasReason(r, ReasonCovariance) || !math.IsNaN(r.SpeedKms[1]) {
				t.Errorf("ok %v reasons %v speed %v", r.OK, r.Reasons, r.SpeedKms)
			}
		})
	}
}

func TestMethodsAndReasons(t *testing.T) {
	mod := func(f func(*Star)) Star { s := baseStar("m"); f(&s); return s }
	cases := []struct {
		name, setting, wantMethod, wantCode string
		wantOK                              bool
		star                                Star
	}{
		{"auto-inverse", "", MethodInverse, "", true, baseStar("a")},
		{"auto-catalog", MethodAuto, MethodCatalog, "", true, mod(func(s *Star) { s.ParallaxErrMas = 0.3; s.DistKpc, s.DistErrKpc = 2, 0.2 })},
		{"auto-modulus", MethodAuto, MethodCatalog, "", true, mod(func(s *Star) { s.ParallaxMas = nan; s.DistMod, s.DistModErr = 13, 0.2 })},
		{"auto-edsd", MethodAuto, MethodEDSD, "", true, mod(func(s *Star) { s.ParallaxErrMas = 0.3 })},
		{"auto-edsd-negative", MethodAuto, MethodEDSD, "", true, mod(func(s *Star) { s.ParallaxMas = -0.2 })},
		{"auto-edsd-catalog-no-error", MethodAuto, MethodEDSD, ReasonCatalogDistance, true, mod(func(s *Star) { s.ParallaxErrMas = 0.3; s.DistKpc = 2 })},
		{"auto-zero-point", MethodAuto, MethodEDSD, "", true, mod(func(s *Star) { s.ParallaxMas = 0.11 })}, // (0.11-0.02)/0.02 < 5
		{"auto-nothing", MethodAuto, "", ReasonNoDistance, false, mod(func(s *Star) { s.ParallaxMas = nan })},
		{"inverse-negative", MethodInverse, MethodInverse, ReasonNonPositivePlx, false, mod(func(s *Star) { s.ParallaxMas = -0.2 })},
		{"inverse-missing", MethodInverse, MethodInverse, ReasonNoParallax, false, mod(func(s *Star) { s.ParallaxErrMas = nan })},
		{"inverse-drops", MethodInverse, MethodInverse, ReasonPlxDrawsDropped, true, mod(func(s *Star) { s.ParallaxErrMas = 0.3 })},
		{"edsd-missing", MethodEDSD, MethodEDSD, ReasonNoParallax, false, mod(func(s *Star) { s.ParallaxMas = nan })},
		{"catalog-missing", MethodCatalog, MethodCatalog, ReasonCatalogDistance, false, baseStar("c")},
		{"catalog-non-positive", MethodCatalog, MethodCatalog, ReasonCatalogDistance, false, mod(func(s *Star) { s.DistKpc, s.DistErrKpc = -1, 0.1 })},
		{"no-position", "", "", ReasonNoPosition, false, mod(func(s *Star) { s.DecDeg = nan })},
		{"no-pm", "", "", ReasonProperMotion, false, mod(func(s *Star) { s.PMRAMasYr = nan })},
		{"no-pm-error", "", "", ReasonProperMotion, false, mod(func(s *Star) { s.PMDecErrMasYr = nan })},
		{"negative-error", "", "", ReasonBadUncertainty, false, mod(func(s *Star) { s.RVErrKms = -1 })},
		{"bad-correlation", "", "", ReasonBadCorrelation, false, mod(func(s *Star) { s.CorrPMRAPMDec = 1.5 })},
		{"rv-without-error", "", MethodInverse, ReasonNoRV, true, mod(func(s *Star) { s.RVErrKms = nan })},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			set := testSettings()
			set.Distance = tc.setting
			set.ParallaxZeroPointMas = 0.02
			r := eval(tc.star, set)
			if r.Method != tc.wantMethod || r.OK != tc.wantOK {
				t.Errorf("method %q ok %v, want %q %v (reasons %v)", r.Method, r.OK, tc.wantMethod, tc.wantOK, r.Reasons)
			}
			if tc.wantCode != "" && !hasReason(r, tc.wantCode) {
				t.Errorf("reasons %v lack %s", r.Reasons, tc.wantCode)
			}
			if tc.wantCode == "" && len(r.Reasons) > 0 {
				t.Errorf("unexpected reasons %v", r.Reasons)
			}
			for _, x := range r.Reasons {
				if x.Message == "" || strings.ToLower(x.Message[:1]) != x.Message[:1] {
					t.Errorf("reason message %q", x.Message)
				}
			}
			if r.OK && (r.Samples < 1 || math.IsNaN(r.DistKpc[1]) || math.IsNaN(r.VEscKms[1])) {
				t.Errorf("ok result without numbers: %+v", r)
			}
			if !r.OK && !math.IsNaN(r.DistKpc[1]) {
				t.Errorf("failed result with numbers: %v", r.DistKpc)
			}
		})
	}
}

func TestSettingsValidate(t *testing.T) {
	mod := func(f func(*Settings)) Settings { s := testSettings(); f(&s); return s }
	for _, tc := range []struct {
		name string
		set  Settings
		want string
	}{
		{"method", mod(func(s *Settings) { s.Distance = "guess" }), "unknown distance method"},
		{"length", mod(func(s *Settings) { s.EDSDLengthKpc = 0 }), "edsd length"},
		{"samples", mod(func(s *Settings) { s.Samples = 0 }), "samples"},
		{"keep", mod(func(s *Settings) { s.KeepSamples = -1 }), "keep samples"},
		{"sun", mod(func(s *Settings) { s.Sun = frames.Sun{} }), "sun distance"},
		{"escape", mod(func(s *Settings) { s.EscapeRadiusKpc = -5 }), "escape radius"},
		{"zero-point", mod(func(s *Settings) { s.ParallaxZeroPointMas = nan }), "zero point"},
		{"stop-p", mod(func(s *Settings) { s.StopBelowP = 1.5 }), "stop-below probability"},
		{"stop-p-nan", mod(func(s *Settings) { s.StopBelowP = nan }), "stop-below probability"},
		{"stop-sigma", mod(func(s *Settings) { s.StopSigma = -1 }), "stop sigma"},
		{"stop-tail", mod(func(s *Settings) { s.TailEscFraction = math.Inf(1) }), "tail escape fraction"},
		{"stop-no-sigma", mod(func(s *Settings) { s.StopBelowP, s.TailEscFraction = 0.5, 0.5 }), "needs a positive stop sigma"},
		{"stop-no-tail", mod(func(s *Settings) { s.StopBelowP, s.StopSigma = 0.5, 5 }), "needs a positive stop sigma"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			err := tc.set.Validate()
			if !errors.Is(err, ErrSettings) || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want ErrSettings mentioning %q", err, tc.want)
			}
			r := eval(baseStar("s"), tc.set)
			if r.OK || !hasReason(r, ReasonSettings) {
				t.Errorf("evaluate with bad settings: %v", r.Reasons)
			}
			if _, err := EvaluateAll(context.Background(), []Star{baseStar("s")}, &tc.set, milkyWayTest(), 1, nil); !errors.Is(err, ErrSettings) {
				t.Errorf("EvaluateAll error %v", err)
			}
		})
	}
	good := testSettings()
	if err := good.Validate(); err != nil {
		t.Errorf("defaults: %v", err)
	}
}

func mixedStars(n int) []Star {
	rnd := rand.New(rand.NewPCG(7, 8))
	stars := make([]Star, n)
	for i := range stars {
		s := baseStar(fmt.Sprintf("mix-%04d", i))
		s.RADeg, s.DecDeg = 360*rnd.Float64(), math.Asin(2*rnd.Float64()-1)/units.RadPerDeg
		s.ParallaxMas = 0.05 + 2*rnd.Float64()
		s.ParallaxErrMas = s.ParallaxMas * (0.02 + 0.6*rnd.Float64())
		s.CorrParallaxPMRA = 0.4*rnd.Float64() - 0.2
		switch i % 4 {
		case 1:
			s.RVKms, s.RVErrKms = nan, nan
		case 2:
			s.DistKpc, s.DistErrKpc = 1/s.ParallaxMas, 0.1/s.ParallaxMas
		}
		s.RVKms *= rnd.Float64() * 3
		stars[i] = s
	}
	return stars
}

func resultKey(r *Result) string { return fmt.Sprintf("%+v", *r) }

// Each star has its own streams: worker count and star order change nothing.
func TestEvaluateAllDeterministic(t *testing.T) {
	for _, prior := range []float64{0, 150} {
		t.Run(fmt.Sprint("prior-", prior), func(t *testing.T) { evaluateAllDeterministic(t, prior) })
	}
}

func evaluateAllDeterministic(t *testing.T, priorKms float64) {
	stars := mixedStars(300)
	set := testSettings()
	set.Samples, set.KeepSamples = 200, 5
	set.VelocityPriorKms = priorKms
	p := milkyWayTest()
	ref, err := EvaluateAll(context.Background(), stars, &set, p, 1, nil)
	if err != nil {
		t.Fatal(err)
	}
	methods := map[string]int{}
	for i := range ref {
		methods[ref[i].Method]++
		var single Result
		Evaluate(&stars[i], &set, p, &single)
		if resultKey(&single) != resultKey(&ref[i]) {
			t.Fatalf("star %d: Evaluate and EvaluateAll differ", i)
		}
	}
	if methods[MethodInverse] == 0 || methods[MethodEDSD] == 0 || methods[MethodCatalog] == 0 {
		t.Errorf("test data should exercise every method: %v", methods)
	}
	perm := rand.New(rand.NewPCG(3, 4)).Perm(len(stars))
	shuffled := make([]Star, len(stars))
	for i, j := range perm {
		shuffled[i] = stars[j]
	}
	for _, workers := range []int{0, 2, 3, 7} {
		t.Run(fmt.Sprint("workers-", workers), func(t *testing.T) {
			calls, last := 0, 0
			got, err := EvaluateAll(context.Background(), shuffled, &set, p, workers, func(done int) { calls++; last = done })
			if err != nil {
				t.Fatal(err)
			}
			if calls == 0 || last != len(stars) {
				t.Errorf("progress: %d calls, last %d", calls, last)
			}
			for i, j := range perm {
				if resultKey(&got[i]) != resultKey(&ref[j]) {
					t.Fatalf("star %s differs with %d workers", stars[j].ID, workers)
				}
			}
		})
	}
	// A different seed must change the numbers.
	set.Seed++
	other, _ := EvaluateAll(context.Background(), stars[:1], &set, p, 1, nil)
	if other[0].SpeedKms == ref[0].SpeedKms {
		t.Error("seed has no effect")
	}
}

func TestEvaluateAllCancelled(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	set := testSettings()
	_, err := EvaluateAll(ctx, mixedStars(10), &set, milkyWayTest(), 2, nil)
	if !errors.Is(err, context.Canceled) {
		t.Errorf("error %v, want context.Canceled", err)
	}
}

// percentiles against a sort-based reference of Hyndman & Fan definition 7.
func TestPercentiles(t *testing.T) {
	rnd := rand.New(rand.NewPCG(11, 12))
	for _, n := range []int{1, 2, 3, 10, 11, 100, 601, 602, 1000, 1001, 5000} {
		for _, kind := range []string{"normal", "duplicates", "constant", "sorted", "reversed", "outlier", "denormal", "heavy-tail"} {
			t.Run(fmt.Sprint(n, kind), func(t *testing.T) {
				a := make([]float64, n)
				for i := range a {
					switch kind {
					case "normal":
						a[i] = rnd.NormFloat64()
					case "duplicates":
						a[i] = math.Round(rnd.NormFloat64() * 2)
					case "constant":
						a[i] = 3
					case "sorted":
						a[i] = float64(i)
					case "reversed":
						a[i] = float64(-i)
					case "outlier": // one far value: every other value in one bucket
						a[i] = rnd.NormFloat64()
						if i == n/3 {
							a[i] = 1e300
						}
					case "denormal": // a range too small for bucket arithmetic
						a[i] = float64(rnd.IntN(7)) * 5e-324
					case "heavy-tail": // Cauchy-like ratio of normals
						a[i] = rnd.NormFloat64() / rnd.NormFloat64()
					}
				}
				s := slices.Clone(a)
				slices.Sort(s)
				got := percentiles(a)
				for q, p := range percentileLevels {
					h := float64(n-1) * p
					k := int(h)
					want := s[k]
					if k+1 < n {
						want += (h - float64(k)) * (s[k+1] - s[k])
					}
					if math.Abs(got[q]-want) > 1e-12*math.Abs(want) { // relative: also exact for denormals
						t.Errorf("p%.0f: %v, want %v", 100*p, got[q], want)
					}
				}
			})
		}
	}
	if got := percentiles([]float64{1, math.NaN(), 2}); !math.IsNaN(got[1]) {
		t.Errorf("NaN input gave %v", got)
	}
}
